"""Reading and writing catalogues chunk by chunk, for files larger than memory.

Reading (:func:`iter_chunks`), per input format:

* **Parquet** — ``pyarrow.parquet.ParquetFile.iter_batches``: only one batch is in memory; a
  batch never spans row groups, so chunks can be smaller than ``chunk_rows`` at group edges.
* **CSV** — ``pyarrow.csv.open_csv`` streaming reader; the block size in bytes is set from
  ``chunk_rows`` and the average line length of the first 64 KiB, so chunk lengths are close to,
  not exactly, ``chunk_rows``. Column types are inferred from the first block: a column that turns
  from integers to decimals later in the file is an error (one line, with the column).
* **FITS** — the table extension is memory-mapped and sliced ``chunk_rows`` rows at a time; only
  the pages touched are read.
* **ECSV, VOTable** — these text formats cannot be parsed piecewise by astropy: the whole file is
  read once, then handed out in slices (memory grows with the file; convert big catalogues to
  Parquet or FITS first).

Writing (:class:`ChunkWriter`), always into a temporary file in the output's folder, renamed when
the last chunk is written (nothing is left behind on failure):

* **Parquet** — ``pyarrow.parquet.ParquetWriter``, one row group per chunk; bounded memory;
* **CSV** — header once then rows, formatted in Arrow by :func:`~hrstage.catalog.formats.arrow_csv`
  (astropy's CSV text, see there); bounded memory;
* **FITS, ECSV, VOTable** — chunks are kept and written at the end in one go: the output side is
  *not* bounded in memory (FITS needs the final string widths in its header; the text formats
  have no append mode in astropy). Use Parquet or CSV output for catalogues bigger than memory.
"""

from __future__ import annotations

import contextlib
import warnings
from pathlib import Path
from typing import Iterator

import numpy as np
from astropy.table import Table, vstack

from ..errors import HrstageInputError
from .arrow import (arrow_to_table, header_from_schema, merge_text_lengths, table_to_arrow, text_length_metadata,
                    text_lengths)
from .atomic import atomic_output
from .formats import (CSV_MAX_BLOCK, _check_readable, _fits_restore, _one_line, _write_fits, arrow_csv,
                      check_unique_names, csv_read_options, csv_supported, csv_text, fits_table_hdu_index, format_of,
                      is_block_too_small, read_table)

DEFAULT_CHUNK_ROWS = 100_000


def count_rows(path, format: str | None = None) -> int | None:
    """Number of rows without reading the data (Parquet, FITS); ``None`` when unknown (CSV...)."""
    path = Path(path)
    fmt = format_of(path, format)
    try:
        if fmt == "parquet":
            import pyarrow.parquet as pq

            return pq.ParquetFile(path).metadata.num_rows
        if fmt == "fits":
            from astropy.io import fits

            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                return int(fits.getheader(path, fits_table_hdu_index(path)).get("NAXIS2", 0))
    except HrstageInputError:
        raise
    except Exception:
        return None
    return None


def _csv_block_size(path: Path, chunk_rows: int) -> int:
    with open(path, "rb") as fh:
        sample = fh.read(65536)
    lines = max(sample.count(b"\n"), 1)
    per_row = max(len(sample) / lines, 8.0)
    return int(min(max(per_row * chunk_rows, 1 << 22), 1 << 30))   # >= 4 MiB: long fields fit


def _open_csv(path: Path, block: int, skip: int = 0, schema=None):
    """A pyarrow streaming CSV reader; after ``skip`` data rows, with the column types of ``schema``."""
    import pyarrow.csv as pacsv

    read, parse, convert = csv_read_options(block_size=block)
    if skip:
        read.skip_rows_after_names = skip
    if schema is not None:
        convert.column_types = {f.name: f.type for f in schema}
    return pacsv.open_csv(path, read_options=read, parse_options=parse, convert_options=convert)


def iter_csv_batches(path: Path, chunk_rows: int):
    """pyarrow RecordBatches of a CSV file, about ``chunk_rows`` rows each, in file order.

    A row longer than the block (10^6-character fields) makes pyarrow stop; the reader is then
    reopened with a block four times larger, after the rows already handed out, with the column
    types of the first block, so the batches stay consistent.
    """
    import pyarrow as pa

    block = _csv_block_size(path, chunk_rows)
    schema = None
    rows_done = 0
    reader = None
    while True:
        try:
            if reader is None:
                reader = _open_csv(path, block, rows_done, schema)
                if schema is None:
                    schema = reader.schema
                    if not schema.names:
                        raise HrstageInputError(f"CSV file {path.name} has no columns")
                    check_unique_names(schema.names, path.name)
            batch = reader.read_next_batch()
        except StopIteration:
            return
        except (pa.ArrowInvalid, pa.ArrowTypeError, UnicodeDecodeError) as exc:
            if is_block_too_small(exc) and block < CSV_MAX_BLOCK:
                block = min(block * 4, CSV_MAX_BLOCK)
                reader = None
                continue
            where = f" after data row {rows_done}" if rows_done else ""
            raise HrstageInputError(f"cannot read CSV file {path.name}{where}: {_one_line(exc)}") from None
        except KeyError as exc:
            raise HrstageInputError(f"{path.name}: the header repeats a column name ({_one_line(exc)})") from None
        rows_done += batch.num_rows
        if batch.num_rows:
            yield batch


def _iter_csv(path: Path, chunk_rows: int) -> Iterator[Table]:
    for batch in iter_csv_batches(path, chunk_rows):
        yield arrow_to_table(batch, {})


def _parquet_file(path: Path):
    """A ParquetFile read without pre-buffering: pyarrow's default (``pre_buffer=True``) fetches
    much of the file ahead of the batch asked for (measured: 56 MB of buffers for 10 000-row
    batches of a 38 MB file, 12 MB without), which unbounds streaming memory."""
    import pyarrow.parquet as pq

    return pq.ParquetFile(path, pre_buffer=False, buffer_size=1 << 23)


def _iter_parquet(path: Path, chunk_rows: int) -> Iterator[Table]:
    import pyarrow as pa
    import pyarrow.parquet as pq

    try:
        pf = _parquet_file(path)
        check_unique_names(pf.schema_arrow.names, path.name)
        attrs = header_from_schema(pf.schema_arrow)
        batches = pf.iter_batches(batch_size=chunk_rows)
        if pf.metadata.num_rows == 0:
            yield arrow_to_table(pf.schema_arrow.empty_table(), attrs)
            return
        for batch in batches:
            yield arrow_to_table(batch, attrs)
    except (pa.ArrowInvalid, OSError) as exc:
        raise HrstageInputError(f"cannot read Parquet file {path.name}: {_one_line(exc)}") from None


def _iter_fits(path: Path, chunk_rows: int) -> Iterator[Table]:
    from astropy.io import fits

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            idx = fits_table_hdu_index(path)
            lazy = Table.read(path, format="fits", hdu=idx, memmap=True, mask_invalid=False,
                              unit_parse_strict="silent")
            header = fits.getheader(path, idx)
            _fits_restore(lazy, header)
            n = len(lazy)
            if n:  # truncated data fail here, with a clear message
                np.asarray(lazy[n - 1].as_void())
    except HrstageInputError:
        raise
    except Exception as exc:
        raise HrstageInputError(f"cannot read FITS file {path.name}: {_one_line(exc)} "
                                "(truncated or not a FITS table?)") from None
    if n == 0:
        yield lazy.copy()
        return
    for start in range(0, n, chunk_rows):
        chunk = lazy[start:start + chunk_rows].copy(copy_data=True)
        chunk.convert_bytestring_to_unicode()
        yield chunk


def iter_arrow_chunks(path, chunk_rows: int = DEFAULT_CHUNK_ROWS, format: str | None = None):
    """Parquet or CSV as pyarrow RecordBatches, with the column attributes read once.

    Returns ``(attrs, batches)``: ``attrs`` as :func:`~hrstage.catalog.arrow.header_from_schema`
    gives (``{}`` for CSV), ``batches`` an iterator in file order. No astropy Table is built: the
    pipeline converts only the columns it reads and writes the rest as they are.
    """
    import pyarrow as pa

    if int(chunk_rows) < 1:
        raise HrstageInputError(f"chunk size must be a positive number of rows, got {chunk_rows}")
    path = Path(path)
    fmt = format_of(path, format)
    _check_readable(path)
    if fmt == "csv":
        return {}, iter_csv_batches(path, int(chunk_rows))
    if fmt != "parquet":
        raise ValueError(f"iter_arrow_chunks reads Parquet and CSV, not {fmt}")
    import pyarrow.parquet as pq

    try:
        pf = _parquet_file(path)
    except (pa.ArrowInvalid, OSError) as exc:
        raise HrstageInputError(f"cannot read Parquet file {path.name}: {_one_line(exc)}") from None
    check_unique_names(pf.schema_arrow.names, path.name)
    attrs = header_from_schema(pf.schema_arrow)

    def batches():
        try:
            if pf.metadata.num_rows == 0:
                yield pa.RecordBatch.from_pylist([], schema=pf.schema_arrow)
                return
            yield from pf.iter_batches(batch_size=int(chunk_rows))
        except (pa.ArrowInvalid, OSError) as exc:
            raise HrstageInputError(f"cannot read Parquet file {path.name}: {_one_line(exc)}") from None

    return attrs, batches()


def iter_chunks(path, chunk_rows: int = DEFAULT_CHUNK_ROWS, format: str | None = None) -> Iterator[Table]:
    """Yield the catalogue as astropy Tables of about ``chunk_rows`` rows, in file order.

    Parameters
    ----------
    path : path-like
    chunk_rows : int
        Target rows per chunk (peak memory scales with it for Parquet, CSV and FITS input).
    format : str, optional
        Default: from the suffix.

    Raises
    ------
    HrstageInputError
        Missing, empty or malformed file (also when the damage is found mid-file).
    """
    if int(chunk_rows) < 1:
        raise HrstageInputError(f"chunk size must be a positive number of rows, got {chunk_rows}")
    chunk_rows = int(chunk_rows)
    path = Path(path)
    fmt = format_of(path, format)
    _check_readable(path)
    if fmt == "parquet":
        yield from _iter_parquet(path, chunk_rows)
    elif fmt == "csv":
        yield from _iter_csv(path, chunk_rows)
    elif fmt == "fits":
        yield from _iter_fits(path, chunk_rows)
    else:
        whole = read_table(path, fmt)
        if len(whole) == 0:
            yield whole
        for start in range(0, len(whole), chunk_rows):
            yield whole[start:start + chunk_rows]


class ChunkWriter:
    """Write a catalogue chunk by chunk into a temporary file, renamed on :meth:`close`.

    Use as a context manager: on an exception inside the block the temporary file is removed and
    the output path is left as it was.

    Parameters
    ----------
    path : path-like
        Final output; format from the suffix unless ``format`` is given.
    overwrite : bool, default False
        Replace an existing output (never an input).
    inputs : iterable of path-like
        Input files the output must not be.
    added : iterable of str, optional
        Parquet output only: names of the columns the caller adds to those of its input (names
        absent from the chunks are ignored). When given, the other (input) columns are written as
        pyarrow writes them by default (dictionary encoding tried, statistics), the added ones
        without statistics and without a dictionary attempt, except those in
        ``added_dictionary`` (columns of few distinct values: dictionary-encoded). Added columns
        of Arrow dictionary type are stored with their plain value type (the Parquet file still
        dictionary-encodes them): astropy's Parquet reader refuses Arrow dictionary columns.
        When every column is of a plain type (no Arrow schema stored in the file, see
        :func:`plain_parquet_schema`) they are handed to the writer as they are instead: Parquet
        stores the same dictionary pages and indices (the file is the same, byte for byte) and
        reads them back as plain strings, without a cast to strings and a new encoding per chunk.
        Without ``added``, every column gets pyarrow's defaults and its own type.
    added_dictionary : iterable of str
        The added columns worth a dictionary (see ``added``).
    """

    def __init__(self, path, format: str | None = None, *, overwrite: bool = False, inputs=(), added=None,
                 added_dictionary=()):
        self.path = Path(path)
        self.format = format_of(self.path, format, option="--out-format")
        self._stack = contextlib.ExitStack()
        try:
            self._tmp = self._stack.enter_context(atomic_output(self.path, overwrite=overwrite, inputs=inputs))
        except BaseException:   # e.g. Ctrl-C just after the temporary file was made: remove it
            self._stack.close()
            raise
        self._writer = None
        self._schema = None
        self._kept: list = []
        self.rows = 0
        self._closed = False
        self._added = None if added is None else frozenset(added)
        self._added_dictionary = frozenset(added_dictionary)
        self._text_lengths: dict = {}
        self._late_metadata = False

    def _parquet_writer(self, schema):
        import pyarrow.parquet as pq

        props = {} if self._added is None else parquet_properties(schema, self._added, self._added_dictionary)
        # The footer's key-value metadata is only complete at the end (the ``table::len::`` width
        # of each text column, which astropy's reader wants, is known after the last chunk); readers
        # take the schema metadata from the stored Arrow schema, written at the start, when there
        # is one. For plain column types the Parquet types say everything, so no Arrow schema is
        # stored and the whole metadata goes into the footer at close.
        self._late_metadata = plain_parquet_schema(schema)
        return pq.ParquetWriter(self._tmp, schema, store_schema=not self._late_metadata, **props)

    # -- arrow-based formats
    def _arrow(self, chunk: Table):
        import pyarrow as pa

        data = table_to_arrow(chunk, with_meta=(self.format == "parquet"))
        if self._schema is None:
            return data
        if data.schema.remove_metadata() != self._schema.remove_metadata():
            try:
                data = data.cast(self._schema)
            except (pa.ArrowInvalid, pa.ArrowNotImplementedError, ValueError) as exc:
                raise HrstageInputError(f"chunk at row {self.rows} does not match the columns of the first "
                                        f"chunk: {_one_line(exc)}") from None
        return data

    def write(self, chunk) -> None:
        """Append one chunk (same columns and types as the first one).

        ``chunk`` is an astropy Table or a pyarrow Table / RecordBatch. Arrow chunks go to a
        Parquet output as they are (their schema metadata, e.g. ``table_meta_yaml``, is kept); for
        the other formats they are converted with :func:`~hrstage.catalog.arrow.arrow_to_table`.
        """
        if self._closed:
            raise RuntimeError("writer already closed")
        if _is_arrow(chunk):
            if self.format == "parquet":
                return self._write_arrow(chunk)
            if self.format == "csv" and csv_supported(chunk.schema):
                return self._write_csv(arrow_csv(chunk, header=self._writer is None), chunk.schema.names,
                                       chunk.num_rows)
            chunk = arrow_to_table(chunk)
        if self.format == "parquet":
            data = self._arrow(chunk)
            if self._writer is None:
                self._schema = data.schema
                self._writer = self._parquet_writer(self._schema)
            merge_text_lengths(self._text_lengths, text_lengths(data))
            self._writer.write_table(data)
        elif self.format == "csv":
            return self._write_csv(csv_text(chunk, header=self._writer is None), chunk.colnames, len(chunk))
        else:
            self._kept.append(chunk)
        self.rows += len(chunk)

    def _write_csv(self, text, names, rows: int) -> None:
        """CSV text (str or UTF-8 bytes) of one chunk, with the header line if it is the first."""
        if self._writer is None:
            self._writer = open(self._tmp, "wb")
            self._names = list(names)
        elif list(names) != self._names:
            raise HrstageInputError(f"chunk at row {self.rows} does not have the columns of the first chunk")
        self._writer.write(text.encode("utf-8") if isinstance(text, str) else text)
        self.rows += int(rows)

    def write_csv_text(self, text, names, rows: int, *, header: bool = False) -> None:
        """Append a chunk already formatted by :func:`~hrstage.catalog.formats.csv_text` or
        :func:`~hrstage.catalog.formats.arrow_csv` (str or UTF-8 bytes), e.g. by a worker process;
        CSV output only. The first chunk comes with its header line (``header=True``), the others
        without.

        ``names`` are the chunk's column names (checked against the first chunk's), ``rows`` its
        number of rows.
        """
        if self._closed:
            raise RuntimeError("writer already closed")
        if self.format != "csv" or (self._writer is None) != bool(header):
            raise RuntimeError("write_csv_text: a CSV output, its first chunk with the header line, "
                               "the others without")
        self._write_csv(text, names, rows)

    def _write_arrow(self, data) -> None:
        import pyarrow as pa

        if isinstance(data, pa.RecordBatch):
            data = pa.Table.from_batches([data])
        merge_text_lengths(self._text_lengths, text_lengths(data))
        if self._added is not None and not (self._late_metadata if self._writer is not None
                                            else plain_parquet_schema(data.schema)):
            data = _plain_added(data, self._added)
        if self._writer is None:
            self._schema = data.schema
            self._writer = self._parquet_writer(self._schema)
        elif not data.schema.equals(self._schema, check_metadata=False):
            try:
                data = data.cast(self._schema)
            except (pa.ArrowInvalid, pa.ArrowNotImplementedError, ValueError) as exc:
                raise HrstageInputError(f"chunk at row {self.rows} does not match the columns of the first "
                                        f"chunk: {_one_line(exc)}") from None
        self._writer.write_table(data)
        self.rows += data.num_rows

    def close(self) -> Path:
        """Finish the file and move it into place; returns the output path."""
        if self._closed:
            return self.path
        try:
            if self.format in ("parquet", "csv"):
                if self._writer is None:
                    raise HrstageInputError("nothing to write: no chunk was produced")
                if self.format == "parquet" and self._late_metadata:
                    md = {k.decode("utf-8"): v.decode("utf-8") for k, v in (self._schema.metadata or {}).items()}
                    md.update(text_length_metadata(self._text_lengths))
                    if md:
                        self._writer.add_key_value_metadata(md)
                self._writer.close()
            else:
                if not self._kept:
                    raise HrstageInputError("nothing to write: no chunk was produced")
                whole = self._kept[0] if len(self._kept) == 1 else vstack(self._kept, join_type="exact",
                                                                          metadata_conflicts="silent")
                self._kept = []
                if self.format == "fits":
                    _write_fits(whole, self._tmp)
                elif self.format == "ecsv":
                    from .ecsv import write_ecsv

                    write_ecsv(whole, self._tmp)
                else:
                    with warnings.catch_warnings():
                        warnings.simplefilter("ignore")
                        whole.write(self._tmp, format="votable", overwrite=True)
        except BaseException:
            self.abort()
            raise
        self._closed = True
        self._stack.close()          # rename into place
        return self.path

    def abort(self) -> None:
        """Drop everything written so far (the temporary file is removed)."""
        if self._closed:
            return
        self._closed = True
        if self._writer is not None:
            with contextlib.suppress(Exception):
                self._writer.close()
        self._kept = []
        try:
            raise _Abort()
        except _Abort:
            import sys

            self._stack.__exit__(*sys.exc_info())

    def __enter__(self):
        return self

    def __exit__(self, exc_type, exc, tb):
        if exc_type is None:
            self.close()
        else:
            self.abort()
        return False


def _leaf_count(t) -> int:
    """Number of Parquet leaf columns an Arrow type is stored in."""
    import pyarrow as pa

    if isinstance(t, pa.ExtensionType):
        return _leaf_count(t.storage_type)
    if pa.types.is_struct(t):
        return sum(_leaf_count(t.field(i).type) for i in range(t.num_fields))
    if pa.types.is_map(t):
        return _leaf_count(t.key_type) + _leaf_count(t.item_type)
    if hasattr(t, "value_type") and not pa.types.is_dictionary(t):     # list kinds
        return _leaf_count(t.value_type)
    return 1


def _leaf_paths(schema):
    """Parquet column paths of each top-level field (``[[path, ...], ...]``), or ``None`` when they
    cannot be worked out. Nested fields have several leaves (``"a.list.element"``), which is what
    pyarrow's per-column writer options name; a top-level name is not enough for them."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    try:
        buf = pa.BufferOutputStream()
        pq.ParquetWriter(buf, schema.remove_metadata()).close()
        md = pq.read_metadata(pa.BufferReader(buf.getvalue()))
        paths = [md.schema.column(i).path for i in range(md.num_columns)]
        counts = [_leaf_count(f.type) for f in schema]
    except Exception:  # noqa: BLE001 - the real writer reports what is wrong with the schema
        return None
    if sum(counts) != len(paths):
        return None
    out, start = [], 0
    for n in counts:
        out.append(paths[start:start + n])
        start += n
    return out


def parquet_properties(schema, added, added_dictionary=()) -> dict:
    """``ParquetWriter`` keywords for a table made of input columns plus ``added`` ones.

    Input columns: dictionary encoding and statistics, as pyarrow does by default. Added columns:
    neither, except a dictionary for those in ``added_dictionary``. Measured on a 1 M-row output of
    ``classify_file`` (29 columns, 4 from the input): dictionary attempts on the continuous float
    columns (masses, Teff and L used) cost ~0.4 s per million rows and make them larger, while the
    few-valued ones (texts, probabilities, flags) shrink several-fold. Returns ``{}`` (pyarrow's
    defaults) when the schema's leaf columns cannot be worked out.
    """
    paths = _leaf_paths(schema)
    if paths is None:
        return {}
    added, added_dictionary = set(added), set(added_dictionary)
    dictionary, statistics = [], []
    for field, leaves in zip(schema, paths):
        if field.name not in added:
            dictionary += leaves
            statistics += leaves
        elif field.name in added_dictionary:
            dictionary += leaves
    return {"use_dictionary": dictionary or False, "write_statistics": statistics or False}


def plain_parquet_schema(schema) -> bool:
    """True when every column is a number, a boolean, text or bytes (dictionary-encoded or not):
    types a Parquet file describes fully without a stored Arrow schema (text comes back as
    ``string``)."""
    import pyarrow as pa

    def plain(t):
        if pa.types.is_dictionary(t):
            return plain(t.value_type)
        return (pa.types.is_integer(t) or pa.types.is_floating(t) and not pa.types.is_float16(t)
                or pa.types.is_boolean(t) or pa.types.is_string(t) or pa.types.is_binary(t))

    return all(plain(f.type) for f in schema)


def _plain_added(data, added):
    """``data`` with its added columns of Arrow dictionary type cast to their value type."""
    import pyarrow as pa

    for i, field in enumerate(data.schema):
        if field.name in added and pa.types.is_dictionary(field.type):
            data = data.set_column(i, field.with_type(field.type.value_type),
                                   data.column(i).cast(field.type.value_type))
    return data


def _is_arrow(obj) -> bool:
    if not type(obj).__module__.startswith("pyarrow"):    # no pyarrow import for other objects
        return False
    import pyarrow as pa

    return isinstance(obj, (pa.Table, pa.RecordBatch))


class _Abort(Exception):
    """Internal: tells the atomic-output context to discard the temporary file."""
