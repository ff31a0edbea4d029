"""One chunk through the engine: :func:`classify_chunk` (astropy Table or Arrow in, the same kind
out, input columns untouched plus ours) and :func:`classify_table` (``hrstage.classify``), and
:func:`classify_one`, the single path every chunk of a file run takes, in this process or in a
worker.
"""

from __future__ import annotations

import numpy as np

from ..catalog.profiles import infos_from_table
from ..classifier._text import CodedText
from ..columns import COLUMNS
from ..errors import HrstageInputError
from .compute import UNUSED_ROLES, compute_columns
from .convert import DICTIONARY_COLUMNS, arrow_infos, is_arrow, numpy_to_arrow, output_yaml
from .options import ClassifyOptions, make_options, resolve_options, table_meta

def classify_chunk(table_or_batch, options: ClassifyOptions, *, offset: int = 0, attrs: dict | None = None,
                   dictionary: bool = True, describe: bool = True):
    """Classify one chunk; the result has the chunk's columns untouched plus ours.

    Parameters
    ----------
    table_or_batch : astropy.table.Table or pyarrow.Table or pyarrow.RecordBatch
        The rows. Only the columns of the mapping are converted; the others pass through as they are
        (for arrow input, without any copy).
    options : ClassifyOptions
        From :func:`make_options`; the mapping is detected on this chunk if not yet resolved
        (resolve it once with :func:`resolve_options` when processing many chunks).
    offset : int
        Index of the chunk's first row in the whole catalogue (seeds the Monte Carlo stream).
    attrs : dict, optional
        Column attributes (units, UCDs) of an arrow input, from
        :func:`hrstage.catalog.arrow.header_from_schema` (read from its schema when omitted).
    dictionary : bool, default True
        Arrow output only: our low-cardinality text columns (:data:`DICTIONARY_COLUMNS`) as
        dictionary-encoded strings; ``False`` gives plain strings.
    describe : bool, default True
        Arrow output only: attach ``table_meta_yaml`` (units, descriptions, UCDs, run metadata) to
        the result's schema, so it can be written to Parquet as it is.

    Returns
    -------
    astropy.table.Table or pyarrow.Table
        Same kind as the input.
    """
    from astropy.table import Column, MaskedColumn, Table

    if is_arrow(table_or_batch):
        import pyarrow as pa

        from ..catalog.arrow import arrow_to_table, header_from_schema

        data = table_or_batch
        if attrs is None:
            attrs = header_from_schema(data.schema)
        opts = resolve_options(arrow_infos(data, attrs), options)
        needed = list(dict.fromkeys(c for r, c in opts.mapping.roles.items() if r not in UNUSED_ROLES))
        sub = arrow_to_table(data.select(needed), attrs)
        cols = compute_columns(sub, opts, offset)
        arrays, names = list(data.columns), list(data.schema.names)
        for name, values in cols.items():
            arrays.append(numpy_to_arrow(values, dictionary and name in DICTIONARY_COLUMNS))
            names.append(opts.prefix + name)
        out = pa.Table.from_arrays(arrays, names=names)
        if describe:
            out = out.replace_schema_metadata({b"table_meta_yaml": output_yaml(out.schema, attrs, opts)})
        return out

    if not isinstance(table_or_batch, Table):
        raise HrstageInputError(f"expected an astropy Table or a pyarrow table, got {type(table_or_batch).__name__}")
    opts = resolve_options(infos_from_table(table_or_batch), options)
    cols = compute_columns(table_or_batch, opts, offset)
    out = Table(table_or_batch, copy=False)  # new table object, input columns shared, untouched
    for name, values in cols.items():
        spec = COLUMNS[name]
        if isinstance(values, CodedText):
            values = values.to_numpy()
        col_cls = MaskedColumn if np.ma.isMaskedArray(values) else Column
        out[opts.prefix + name] = col_cls(values, name=opts.prefix + name, unit=spec.unit,
                                          description=spec.description,
                                          meta={"ucd": spec.ucd} if spec.ucd else None, copy=False)
    out.meta.update(table_meta(opts))
    return out


def classify_table(table, **options):
    """Label every star of an astropy Table with its evolutionary stage.

    Parameters
    ----------
    table : astropy.table.Table
        The catalogue. Columns are found by profile (``docs/catalog.md``); a table with ``teff`` (K)
        and ``lum`` (Lsun), optionally ``feh``, ``logg`` and errors, needs no options.
    **options
        ``profile`` (``"direct"``, ``"gaia"``, ``"johnson"``, ``"spectroscopic"``, ``"none"``);
        role names as keywords to name columns (``teff="TEFF"``, ``lum="LUM"``, ``sptype="SpT"``)
        or ``columns={role: name}``; ``feh`` (a column name, or a number for rows without one);
        ``n_draws`` (Monte Carlo draws for probabilities, default 0), ``seed``;
        ``min_parallax_snr`` (default 5), ``parallax_zp`` (mas, subtracted), ``r_v``;
        ``prefix`` for our column names; ``check_sptypes`` (default True); ``params`` (dict for
        :func:`hrstage.classifier.classify_hr`); ``add_columns`` (``"all"``, the default;
        ``"brief"``: :data:`BRIEF_COLUMNS`; or a list of our column names - ``stage`` and
        ``flags`` always come).

    Returns
    -------
    astropy.table.Table
        The input columns, in order and untouched, then ``stage``, the probabilities, mass estimate,
        the Teff and L used, ``hr_source``, ``flags``, ``flag_text`` (and the ``sptype_*`` columns
        when an MK type column is present), or those ``add_columns`` asks for. ``meta`` records
        the profile, roles and options.

    Raises
    ------
    HrstageInputError
        No usable columns, a named column missing, a whole-column unit mistake, a name clash.
    """
    from astropy.table import Table

    if not isinstance(table, Table):
        raise HrstageInputError(f"classify expects an astropy Table, got {type(table).__name__}")
    opts = make_options(**options)
    opts = resolve_options(infos_from_table(table), opts)
    return classify_chunk(table, opts)


def classify_one(chunk, opts, offset, attrs):
    """The one path of a file run's chunk, in this process or in a worker: classified with the
    resolved options, an input error named with the chunk's rows, an astropy result described
    (units, descriptions of our columns) for writing."""
    from ..catalog.formats import describe_columns

    try:
        res = classify_chunk(chunk, opts, offset=offset, attrs=attrs)
    except HrstageInputError as exc:
        if offset == 0:
            raise
        n = rows_of(chunk)  # rows in the message are counted within the chunk: say which chunk
        raise HrstageInputError(f"{exc} (in the chunk of data rows {offset}-{offset + n - 1}, "
                                f"counted from 0; row numbers above are within the chunk)") from None
    if attrs is None:
        describe_columns(res, prefix=opts.prefix)
    return res


def chunk_tally(res, prefix):
    """(stage names, counts, flag integers, rows) of one classified chunk."""
    stage, fl = chunk_counts(res, prefix)
    return stage[0], np.asarray(stage[1]), fl, rows_of(res)


def rows_of(chunk) -> int:
    return chunk.num_rows if is_arrow(chunk) else len(chunk)


def chunk_counts(res, prefix):
    """(stage names, counts) and the flag integers of one classified chunk (arrow or astropy)."""
    if is_arrow(res):
        import pyarrow.compute as pc

        vc = pc.value_counts(res.column(prefix + "stage"))
        names = [str(v) for v in vc.field("values").to_pylist()]
        return (names, vc.field("counts").to_numpy()), res.column(prefix + "flags").to_numpy()
    names, cnt = np.unique(np.asarray(res[prefix + "stage"]).astype(str), return_counts=True)
    return (list(names), cnt), np.asarray(res[prefix + "flags"], dtype=np.int64)
