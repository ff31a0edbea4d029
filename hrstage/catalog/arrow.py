"""Conversions between astropy Tables and pyarrow tables / record batches.

Used by the Parquet and CSV paths (whole-file and streaming). Column units, descriptions and
``meta`` (UCDs) travel in the schema metadata under the key astropy itself uses for Parquet
(``table_meta_yaml``, the ECSV-style YAML header), so files we write read back with units through
``astropy.table.Table.read`` as well as through :func:`hrstage.catalog.read_table`. Null entries
become masked entries and masked entries become nulls.
"""

from __future__ import annotations

import numpy as np
from astropy.table import Column, MaskedColumn, Table
from astropy.table import meta as table_meta

from ..errors import HrstageInputError

YAML_KEY = b"table_meta_yaml"


def _pa():
    try:
        import pyarrow as pa
    except ImportError as exc:  # pragma: no cover - pyarrow is in the 'fast' extra
        raise HrstageInputError("Parquet and CSV need pyarrow: pip install 'hrstage[fast]'") from exc
    return pa


def header_from_schema(schema) -> dict:
    """Column attributes stored in a schema by astropy or by us: ``{name: {unit, description, meta}}``."""
    md = schema.metadata or {}
    if YAML_KEY not in md:
        return {}
    try:
        hdr = table_meta.get_header_from_yaml(md[YAML_KEY].decode("utf-8").split("\n"))
    except Exception:  # a foreign or damaged header: ignore it, keep the data
        return {}
    out = {}
    for entry in hdr.get("datatype", []):
        out[entry["name"]] = {k: entry[k] for k in ("unit", "description", "meta") if k in entry}
    out["__table_meta__"] = dict(hdr.get("meta", {}) or {})
    return out


def _to_numpy(arr):
    """One arrow array (not chunked) -> (numpy data, mask or None)."""
    pa = _pa()
    import pyarrow.compute as pc

    mask = None
    if arr.null_count:
        mask = arr.is_null().to_numpy(zero_copy_only=False)
    t = arr.type
    if pa.types.is_dictionary(t):
        return _to_numpy(arr.dictionary_decode())
    if pa.types.is_string(t) or pa.types.is_large_string(t):
        # object array of Python strings: a fixed-width array would make every row as wide as
        # the longest entry (one 10^6-character field -> 4 MB per row)
        filled = pc.fill_null(arr, "") if mask is not None else arr
        data = filled.to_numpy(zero_copy_only=False).astype(object, copy=False)
    elif pa.types.is_boolean(t):
        filled = pc.fill_null(arr, False) if mask is not None else arr
        data = filled.to_numpy(zero_copy_only=False).astype(bool)
    elif pa.types.is_integer(t) or pa.types.is_floating(t):
        if mask is not None:
            fill = 0 if pa.types.is_integer(t) else np.nan
            arr = pc.fill_null(arr, pa.scalar(fill, type=t))
        data = arr.to_numpy(zero_copy_only=False)
    elif pa.types.is_fixed_size_list(t):
        size = t.list_size
        flat = _to_numpy(arr.flatten())[0]
        data = flat.reshape(len(arr), size)
    else:
        data = arr.to_numpy(zero_copy_only=False)
    return data, mask


def arrow_to_table(data, attrs: dict | None = None) -> Table:
    """pyarrow Table or RecordBatch -> astropy Table, restoring units / descriptions / meta.

    Parameters
    ----------
    data : pyarrow.Table or pyarrow.RecordBatch
    attrs : dict, optional
        Output of :func:`header_from_schema`; read from ``data.schema`` when omitted.
    """
    pa = _pa()
    if attrs is None:
        attrs = header_from_schema(data.schema)
    names = list(data.schema.names)
    if len(set(names)) != len(names):
        dup = sorted({n for n in names if names.count(n) > 1})
        raise HrstageInputError(f"the header repeats column name(s) {', '.join(dup)}; rename them first")
    cols = []
    for name in data.schema.names:
        arr = data.column(name)
        if isinstance(arr, pa.ChunkedArray):
            arr = arr.combine_chunks() if arr.num_chunks != 1 else arr.chunk(0)
        values, mask = _to_numpy(arr)
        info = attrs.get(name, {})
        kw = dict(name=name, unit=info.get("unit"), description=info.get("description"),
                  meta=info.get("meta"))
        if mask is not None and mask.any():
            cols.append(MaskedColumn(values, mask=mask, copy=False, **kw))
        else:
            cols.append(Column(values, copy=False, **kw))
    tbl = Table(cols, copy=False)
    tbl.meta.update(attrs.get("__table_meta__", {}))
    return tbl


def _column_to_arrow(col):
    pa = _pa()
    data = np.asarray(col)
    mask = None
    if isinstance(col, MaskedColumn) or hasattr(col, "mask"):
        m = np.ma.getmaskarray(col)
        if m.any():
            mask = m
        data = np.ma.getdata(col)
    if data.dtype.byteorder not in ("=", "|") and data.dtype.kind in "biuf":
        data = data.astype(data.dtype.newbyteorder("="))      # FITS is big-endian; arrow is not
    if data.ndim > 1:
        if data.ndim != 2:
            raise HrstageInputError(f"column {col.info.name!r}: arrays of more than one dimension per row "
                                    "cannot be written to Parquet/CSV; use FITS or ECSV")
        flat = pa.array(np.ascontiguousarray(data).ravel())
        arr = pa.FixedSizeListArray.from_arrays(flat, data.shape[1])
        if mask is not None:
            raise HrstageInputError(f"column {col.info.name!r}: masked array cells are not supported in Parquet")
        return arr
    if data.dtype.kind == "O":
        return pa.array(data, mask=mask, from_pandas=False)
    if data.dtype.kind == "S":
        data = np.char.decode(data, "utf-8")
    if data.dtype.kind == "U":
        return pa.array(data, type=pa.string(), mask=mask)
    return pa.array(data, mask=mask)


def table_to_arrow(table: Table, *, with_meta: bool = True):
    """astropy Table -> pyarrow Table, carrying column attributes in ``table_meta_yaml``."""
    pa = _pa()
    arrays = [_column_to_arrow(table[name]) for name in table.colnames]
    names = list(table.colnames)
    metadata = None
    if with_meta:
        plain = Table([Column(np.zeros(0, dtype=table[n].dtype if table[n].dtype.kind != "O" else "U1"),
                              name=n, unit=table[n].unit, description=table[n].description,
                              meta=dict(table[n].meta) if table[n].meta else None,
                              shape=table[n].shape[1:]) for n in names],
                      meta=table.meta)
        yaml_lines = table_meta.get_yaml_from_table(plain)
        # no "table::len::" keys: string widths differ between streamed chunks, and readers
        # (astropy included) then size text columns from the data itself
        metadata = {YAML_KEY: "\n".join(yaml_lines).encode("utf-8")}
    return pa.Table.from_arrays(arrays, names=names, metadata=metadata)


def meta_yaml(fields, attrs: dict | None = None, meta: dict | None = None) -> bytes:
    """The ``table_meta_yaml`` bytes for a schema: ``fields`` are ``(name, numpy dtype)`` pairs,
    ``attrs`` ``{name: {unit, description, meta}}`` (as :func:`header_from_schema` gives).

    Built once per output file and attached to every chunk, so streamed chunks are not converted
    to astropy Tables just to describe their columns.
    """
    attrs = attrs or {}
    cols = []
    for name, dtype in fields:
        info = attrs.get(name, {})
        dt = np.dtype(dtype)
        cols.append(Column(np.zeros(0, dtype="U1" if dt.kind == "O" else dt), name=name, unit=info.get("unit"),
                           description=info.get("description"),
                           meta=dict(info["meta"]) if info.get("meta") else None))
    plain = Table(cols, meta=dict(meta or {}))
    return "\n".join(table_meta.get_yaml_from_table(plain)).encode("utf-8")


def numpy_dtype_of(arrow_type) -> np.dtype:
    """The numpy dtype a column of this arrow type becomes in :func:`arrow_to_table`."""
    pa = _pa()
    if pa.types.is_dictionary(arrow_type):
        arrow_type = arrow_type.value_type
    if pa.types.is_string(arrow_type) or pa.types.is_large_string(arrow_type):
        return np.dtype(object)
    if pa.types.is_boolean(arrow_type):
        return np.dtype(bool)
    try:
        return np.dtype(arrow_type.to_pandas_dtype())
    except (NotImplementedError, TypeError):
        return np.dtype(object)



#: Schema-metadata key prefix with which astropy's Parquet reader sizes a text column (characters).
TEXT_LENGTH_KEY = "table::len::"


def text_lengths(data) -> dict:
    """``{name: longest entry}`` of the text columns of a pyarrow Table or RecordBatch: characters
    for text (dictionary columns: their dictionaries), bytes for binary; 0 for all-null columns.

    Written as ``table::len::NAME`` metadata, which astropy's Parquet reader wants for every text
    column (without it, it warns and scans the column).
    """
    pa = _pa()
    import pyarrow.compute as pc

    out = {}
    for name, col in zip(data.schema.names, data.columns):
        t = col.type
        chunks = col.chunks if hasattr(col, "chunks") else [col]
        if pa.types.is_dictionary(t):
            t = t.value_type
            chunks = [c.dictionary for c in chunks]
        if pa.types.is_string(t) or pa.types.is_large_string(t):
            measure = pc.utf8_length
        elif pa.types.is_binary(t) or pa.types.is_large_binary(t):
            measure = pc.binary_length
        else:
            continue
        longest = 0
        for c in chunks:
            if len(c):
                m = pc.max(measure(c)).as_py()
                longest = max(longest, m or 0)
        out[name] = longest
    return out


def merge_text_lengths(total: dict, new: dict) -> dict:
    """Longest entries over chunks (in place on ``total``)."""
    for k, v in new.items():
        total[k] = max(total.get(k, 0), v)
    return total


def text_length_metadata(lengths: dict) -> dict:
    """``table::len::NAME`` metadata entries (at least 1: astropy makes a ``U<n>`` column of it)."""
    return {f"{TEXT_LENGTH_KEY}{k}": str(max(int(v), 1)) for k, v in lengths.items()}


def with_text_lengths(data, lengths: dict):
    """``data`` with the ``table::len::`` entries added to its schema metadata."""
    md = dict(data.schema.metadata or {})
    md.update({k.encode("utf-8"): v.encode("utf-8") for k, v in text_length_metadata(lengths).items()})
    return data.replace_schema_metadata(md)
