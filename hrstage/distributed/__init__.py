"""hrstage on Dask: the same classification, one partition at a time, on one machine or a cluster.

The core of this face is one pure function, :func:`classify_partition`, that takes a
``pandas.DataFrame`` and returns a ``pandas.DataFrame``: the partition's own columns, untouched and
in order, followed by the columns hrstage adds (``hrstage.columns``). It runs the very same
pipeline as :func:`hrstage.classify`, so a catalogue split into partitions gets exactly the labels
it would get in one process. :func:`output_meta` declares the output schema (the dtype of every
column, text columns as ``string[pyarrow]``, flags as ``int64``) so that Dask never has to guess it
from fake data; :func:`classify_dask` maps the kernel over a dask DataFrame with that schema, and
:func:`classify_parquet_dataset` does Parquet dataset in → Parquet dataset out.

Dask, distributed and pandas are an optional extra (``pip install 'hrstage[distributed]'``); this
module imports them only when a function is called, so ``import hrstage`` never needs them.

Running on a cluster
--------------------
Connect a client before calling; every Dask computation then runs on the cluster::

    from distributed import Client
    from hrstage.distributed import classify_parquet_dataset

    client = Client("scheduler-host:8786")   # the address your scheduler prints
    classify_parquet_dataset("survey/stars/", "survey/stars_staged/", feh="FE_H")

hrstage (same version) must be installed on every worker, and the input and output folders must be
visible to every worker under the same path (shared file system or object store URL with
``storage_options``). See ``docs/distributed.md``.

Notes
-----
Labels are indicative: they come from the star's place on the HR diagram relative to analytic
stellar relations and do not replace a spectroscopic analysis. Monte Carlo probabilities
(``n_draws > 0``) are reproducible for a given seed and row order; see ``docs/distributed.md`` for
what that means when a catalogue is split differently.
"""

from __future__ import annotations

import json
import os
import shutil
import uuid
from functools import partial
from pathlib import Path

import numpy as np

from ..columns import COLUMNS
from ..errors import HrstageInputError

__all__ = [
    "classify_partition",
    "output_meta",
    "classify_dask",
    "classify_parquet_dataset",
    "output_dtypes",
    "TEMP_MARK",
]

#: Marker in the names of the temporary folders classify_parquet_dataset writes into.
TEMP_MARK = ".hrstage-partial-"


# --------------------------------------------------------------------------------------------
# lazy imports
# --------------------------------------------------------------------------------------------
def _pandas():
    try:
        import pandas as pd
    except ImportError as exc:  # pragma: no cover - depends on the installation
        raise ImportError(
            "hrstage.distributed needs pandas (and dask for the dask functions): "
            "pip install 'hrstage[distributed]'"
        ) from exc
    return pd


def _dask_dataframe():
    try:
        import dask.dataframe as dd
    except ImportError as exc:  # pragma: no cover - depends on the installation
        raise ImportError(
            "hrstage.distributed needs dask[dataframe]: pip install 'hrstage[distributed]'"
        ) from exc
    return dd


def _text_dtype():
    """Dtype of hrstage's text columns in pandas: Arrow-backed strings, missing = <NA>.

    This is the dtype dask itself gives text columns it reads from Parquet, so a dataset written by
    :func:`classify_parquet_dataset` reads back with the schema :func:`output_meta` declares.
    Falls back to ``object`` without pyarrow.
    """
    pd = _pandas()
    try:
        import pyarrow  # noqa: F401

        return pd.StringDtype("pyarrow")
    except ImportError:  # pragma: no cover - pyarrow is part of the extra
        return np.dtype(object)


def _declared_dtype(name: str, fallback=None):
    """pandas dtype of an hrstage output column, from its definition in ``hrstage.columns``.

    A column not defined there gets the dtype implied by ``fallback`` (the numpy dtype of the
    astropy column the pipeline produced).
    """
    col = COLUMNS.get(name)
    kind = col.dtype if col is not None else None
    if kind is None and fallback is not None:
        kind = {"f": "f8", "i": "i8", "u": "i8", "b": "b1", "U": "U", "S": "U", "O": "U"}.get(np.dtype(fallback).kind, "O")
    if kind in ("U", "O"):
        return _text_dtype()
    if kind == "i8":
        return np.dtype(np.int64)
    if kind == "b1":
        return np.dtype(bool)
    if kind == "f8":
        return np.dtype(np.float64)
    if kind == "f4":
        return np.dtype(np.float32)
    return np.dtype(object)


def output_dtypes(names) -> dict:
    """Declared pandas dtypes of the given hrstage output columns (``hrstage.columns``)."""
    return {n: _declared_dtype(n) for n in names}


# --------------------------------------------------------------------------------------------
# pandas <-> arrow
# --------------------------------------------------------------------------------------------
def _check_frame(df) -> None:
    pd = _pandas()
    if not isinstance(df, pd.DataFrame):
        raise HrstageInputError(f"expected a pandas DataFrame, got {type(df).__name__}")
    names = [str(c) for c in df.columns]
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        raise HrstageInputError(
            f"duplicate column name(s) {', '.join(repr(d) for d in dup)}: every column needs a unique name"
        )


def _frame_to_arrow(df):
    """A pandas DataFrame → a pyarrow Table with the same columns (no index).

    Numbers go over without copying; NaN in numpy columns stays NaN (as in a file written from
    numpy), pandas missing values (``<NA>``, ``None``) become nulls, which the pipeline reads as
    masked entries exactly as when it reads a Parquet file. An ``object`` column that Arrow cannot
    type (text mixed with numbers) is passed on as text, each value written as its str().
    """
    import pyarrow as pa

    arrays = []
    for name in df.columns:
        series = df[name]
        try:
            if isinstance(series.dtype, np.dtype) and series.dtype.kind in "fiub":
                arr = pa.array(series.to_numpy())
            else:
                arr = pa.Array.from_pandas(series)
        except (pa.ArrowInvalid, pa.ArrowTypeError):
            arr = pa.Array.from_pandas(series.astype(_text_dtype()))
        arrays.append(arr)
    return pa.Table.from_arrays(arrays, names=[str(c) for c in df.columns])


def _arrow_to_series(arr, name: str, dtype, index):
    """One arrow column from the pipeline → a pandas Series of the declared dtype."""
    import pyarrow as pa

    pd = _pandas()
    if isinstance(arr, pa.ChunkedArray):
        arr = arr.combine_chunks() if arr.num_chunks != 1 else arr.chunk(0)
    if isinstance(dtype, np.dtype) and dtype.kind in "iub":
        if arr.null_count:
            raise HrstageInputError(  # the pipeline promises complete flag columns; guard it
                f"column {name!r} came back with {arr.null_count} null entries but is declared {dtype}"
            )
        values = arr.to_numpy(zero_copy_only=False).astype(dtype, copy=False)
    elif isinstance(dtype, np.dtype) and dtype.kind == "f":
        values = arr.to_numpy(zero_copy_only=False).astype(np.float64, copy=False)
    elif isinstance(dtype, pd.StringDtype):
        if not (pa.types.is_string(arr.type) or pa.types.is_large_string(arr.type)):
            arr = arr.cast(pa.string())
        values = pd.array(arr, dtype=dtype) if len(arr) else pd.array([], dtype=dtype)
    else:
        values = arr.to_numpy(zero_copy_only=False).astype(object)
    return pd.Series(values, index=index, name=name, dtype=dtype, copy=False)


# --------------------------------------------------------------------------------------------
# the kernel and its schema
# --------------------------------------------------------------------------------------------
def classify_partition(df, *, row_offset: int = 0, column_attrs: dict | None = None, **options):
    """Classify the stars of one pandas DataFrame (one Dask partition).

    Parameters
    ----------
    df : pandas.DataFrame
        The partition, with the same columns :func:`hrstage.classify` accepts (for instance
        ``teff`` in K and ``lum`` in Lsun, optionally ``feh``, errors, ``logg``, an MK type, or
        photometry and parallax). An empty frame is fine (it gives the output schema).
    row_offset : int, default 0
        Index of the partition's first row in the whole catalogue. It seeds the Monte Carlo draws
        (``n_draws > 0``) the way the streaming command line seeds each chunk, so equal
        partitions give exactly the probabilities of ``hrstage classify --chunk-rows`` with the
        same chunk size. No effect on point classification.
    column_attrs : dict, optional
        Units / descriptions / UCDs of the input columns, as
        :func:`hrstage.catalog.arrow.header_from_schema` returns them from a Parquet schema;
        pandas drops units, so without them every column is taken in hrstage's canonical unit
        (K, Lsun, mas, mag, dex).
    **options
        The options of :func:`hrstage.classify` (column names such as ``teff="TEFF"``, ``feh``,
        ``n_draws``, ``seed``, ``profile``, ``prefix``...).

    Returns
    -------
    pandas.DataFrame
        The input columns, untouched, with the same index, followed by hrstage's output columns
        with the dtypes of :func:`output_meta`. Every row comes out, in order; a row that could not
        be classified is ``unclassified`` with its reason in ``flag_text``.

    Raises
    ------
    HrstageInputError
        Duplicate column names, or what :func:`hrstage.classify` rejects (no usable columns,
        unknown option, a whole-column unit mistake, a name clash with our columns).
    """
    pd = _pandas()
    from ..engine import classify_chunk, make_options

    _check_frame(df)
    opts = make_options(**options)
    data = _frame_to_arrow(df)
    result = classify_chunk(data, opts, offset=int(row_offset), attrs=column_attrs or {})
    if result.num_rows != len(df):
        raise HrstageInputError(  # the pipeline promises every row; guard the promise here
            f"pipeline returned {result.num_rows} rows for a partition of {len(df)}"
        )
    prefix = opts.prefix or ""
    added = result.schema.names[len(df.columns):]
    new = {}
    for name in added:
        canonical = name[len(prefix):] if prefix and name.startswith(prefix) else name
        dtype = _declared_dtype(canonical, fallback=_numpy_kind(result.column(name).type))
        new[name] = _arrow_to_series(result.column(name), name, dtype, df.index)
    if not new:
        return df.copy()
    return pd.concat([df, pd.DataFrame(new, index=df.index)], axis=1)


def _numpy_kind(arrow_type):
    import pyarrow as pa

    if pa.types.is_floating(arrow_type):
        return np.dtype(np.float64)
    if pa.types.is_integer(arrow_type):
        return np.dtype(np.int64)
    if pa.types.is_boolean(arrow_type):
        return np.dtype(bool)
    return np.dtype("U1")


def output_meta(input_meta, **options):
    """The declared output schema of :func:`classify_partition` for a given input schema.

    Parameters
    ----------
    input_meta : pandas.DataFrame or dask DataFrame
        A frame with the input columns and dtypes (its rows are ignored); a dask DataFrame's own
        ``_meta`` is used.
    **options
        The options that will be passed to the kernel (they decide, for instance, whether the MK
        spectral-type columns are added, and the prefix of our column names).

    Returns
    -------
    pandas.DataFrame
        An empty frame: the input columns with their dtypes, then every output column with the
        dtype of its definition in ``hrstage.columns``: ``float64`` for numbers, ``int64`` for
        ``flags``, ``string[pyarrow]`` for text (``stage``, ``flag_text``, ``hr_source``...).
    """
    pd = _pandas()
    meta = getattr(input_meta, "_meta", input_meta)
    if not isinstance(meta, pd.DataFrame):
        raise HrstageInputError(f"input_meta must be a pandas or dask DataFrame, got {type(input_meta).__name__}")
    options = {k: v for k, v in options.items() if k != "row_offset"}
    return classify_partition(meta.iloc[:0], **options)


def _partition_offsets(ddf) -> list[int]:
    """First-row index of every partition (one cheap pass; Parquet row counts come from metadata)."""
    lengths = ddf.map_partitions(len, meta=(None, "i8")).compute()
    return [0, *np.cumsum(np.asarray(lengths, dtype=np.int64))[:-1].tolist()]


def _classify_numbered(df, offsets=None, partition_info=None, **options):
    offset = 0
    if offsets is not None and partition_info is not None:
        offset = offsets[partition_info["number"]]
    return classify_partition(df, row_offset=offset, **options)


def classify_dask(ddf, *, column_attrs: dict | None = None, **options):
    """Classify a dask DataFrame partition by partition, with the declared output schema.

    Parameters
    ----------
    ddf : dask.dataframe.DataFrame
        The catalogue; one partition is classified at a time by :func:`classify_partition`.
    column_attrs : dict, optional
        Units / UCDs of the input columns (see :func:`classify_partition`).
    **options
        Passed to the kernel (the options of :func:`hrstage.classify`). With ``n_draws > 0`` the
        partition lengths are counted first (a quick pass) so that each partition seeds its
        draws from its first row's index in the catalogue.

    Returns
    -------
    dask.dataframe.DataFrame
        Lazy result: the input columns followed by hrstage's columns, with the schema of
        :func:`output_meta`. Nothing runs until you call ``.compute()``, ``.to_parquet()``... on
        it, with whatever scheduler is active (a connected ``distributed.Client`` if there is one).
    """
    _dask_dataframe()
    meta = output_meta(ddf, column_attrs=column_attrs, **options)
    offsets = _partition_offsets(ddf) if int(options.get("n_draws", options.get("draws", 0)) or 0) > 0 else None
    kernel = partial(_classify_numbered, offsets=offsets, column_attrs=column_attrs, **options)
    return ddf.map_partitions(kernel, meta=meta, enforce_metadata=False)


def _input_attrs(in_path, columns=None) -> dict:
    """Units / descriptions / UCDs stored in the input's Parquet schema (astropy YAML header)."""
    try:
        import pyarrow.dataset as pads

        from ..catalog.arrow import header_from_schema

        schema = pads.dataset(str(in_path), format="parquet").schema
    except Exception:  # noqa: BLE001 - remote or unusual layouts: no units, canonical units assumed
        return {}
    attrs = header_from_schema(schema)
    attrs.pop("__table_meta__", None)
    if columns is not None:
        attrs = {k: v for k, v in attrs.items() if k in set(columns)}
    return attrs


def _parquet_metadata(meta, column_attrs: dict, prefix: str) -> dict:
    """Schema metadata for the output files.

    ``table_meta_yaml`` is astropy's own header (as :mod:`hrstage.catalog.arrow` writes it), so
    every output file reads back with units, descriptions and UCDs through
    :func:`hrstage.catalog.read_table` or ``astropy.table.Table.read``; ``hrstage`` is a small JSON
    summary of our columns for readers that do not speak astropy.
    """
    from astropy.table import Column, Table

    from .. import __version__
    from ..catalog.arrow import YAML_KEY
    from ..engine import CAUTION

    cols, ours = [], {}
    for name in meta.columns:
        canonical = name[len(prefix):] if prefix and name.startswith(prefix) else name
        spec = COLUMNS.get(canonical) if name not in column_attrs else None
        dtype = meta[name].dtype
        kind = dtype.kind if isinstance(dtype, np.dtype) and dtype.kind in "fiub" else "U"
        np_dtype = {"f": "f8", "i": "i8", "u": "u8", "b": "?"}.get(kind, "U1")
        if spec is not None:
            info = {"unit": spec.unit, "description": spec.description, "meta": {"ucd": spec.ucd} if spec.ucd else None}
            ours[name] = {"unit": spec.unit, "description": spec.description, "ucd": spec.ucd}
        else:
            info = column_attrs.get(name, {})
        cols.append(Column(np.zeros(0, dtype=np_dtype), name=name, unit=info.get("unit"),
                           description=info.get("description"), meta=info.get("meta") or None))
    from astropy.table import meta as table_meta

    plain = Table(cols, meta={"hrstage_version": __version__, "hrstage_caution": CAUTION})
    yaml_lines = table_meta.get_yaml_from_table(plain)
    summary = {"hrstage_version": __version__, "caution": CAUTION, "columns": ours}
    return {YAML_KEY: "\n".join(yaml_lines).encode("utf-8"), b"hrstage": json.dumps(summary).encode("utf-8")}


def classify_parquet_dataset(in_path, out_path, *, overwrite=False, columns=None, storage_options=None, **options):
    """Parquet dataset (a file or a folder of files) in → Parquet dataset (a folder) out.

    Parameters
    ----------
    in_path : str or path-like
        A Parquet file, a folder of Parquet files, a glob, or a URL that ``dask.dataframe.read_parquet``
        understands. Each file (or row group, as dask decides) becomes a partition.
    out_path : str or path-like
        Output folder, one ``part.N.parquet`` per partition. It is written to a temporary folder
        beside it and renamed into place only when every partition is written, so a failure leaves
        a previous output intact. Local paths only for the atomic rename; on object stores the
        folder is written directly.
    overwrite : bool, default False
        Replace an existing output folder.
    columns : list of str, optional
        Read only these input columns (faster when the catalogue is wide).
    storage_options : dict, optional
        Passed to dask's Parquet reader and writer (credentials for object stores...).
    **options
        Passed to the kernel.

    Returns
    -------
    pathlib.Path or str
        The output folder.

    Raises
    ------
    HrstageInputError
        The output is the input, exists without ``overwrite``, or the input cannot be read.
    """
    dd = _dask_dataframe()
    remote = "://" in str(out_path)
    out = str(out_path) if remote else Path(out_path)
    if not remote:
        src = Path(str(in_path))
        if src.exists() and out.exists() and os.path.samefile(src, out):
            raise HrstageInputError(f"output {out} is the input; choose another output folder (the input is never modified)")
        if src.exists() and src.is_dir() and out.resolve().is_relative_to(src.resolve()):
            raise HrstageInputError(f"output {out} is inside the input folder {src}; choose a folder outside it")
        if out.exists() and not overwrite:
            raise HrstageInputError(f"output {out} already exists; pass overwrite=True to replace it")
        if out.exists() and not out.is_dir():
            raise HrstageInputError(f"output {out} exists and is not a folder")
        if not out.parent.exists():
            raise HrstageInputError(f"folder of output {out} does not exist")
    try:
        ddf = dd.read_parquet(in_path, columns=columns, storage_options=storage_options)
    except (FileNotFoundError, OSError, ValueError) as exc:
        raise HrstageInputError(f"cannot read Parquet input {in_path}: {exc}") from exc
    attrs = {} if "://" in str(in_path) else _input_attrs(in_path, columns)
    result = classify_dask(ddf, column_attrs=attrs, **options)
    metadata = _parquet_metadata(result._meta, attrs, options.get("prefix") or "")
    if remote:
        result.to_parquet(out, write_index=False, overwrite=overwrite, custom_metadata=metadata,
                          storage_options=storage_options)
        return out
    tmp = out.parent / f".{out.name}{TEMP_MARK}{uuid.uuid4().hex[:8]}"
    try:
        result.to_parquet(str(tmp), write_index=False, custom_metadata=metadata, storage_options=storage_options)
        if out.exists():
            old = out.parent / f".{out.name}{TEMP_MARK}old-{uuid.uuid4().hex[:8]}"
            os.replace(out, old)
            os.replace(tmp, out)
            shutil.rmtree(old, ignore_errors=True)
        else:
            os.replace(tmp, out)
    finally:
        if tmp.exists():
            shutil.rmtree(tmp, ignore_errors=True)
    return out
