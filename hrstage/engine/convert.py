"""Arrow conversion of our columns: coded texts to (dictionary-encoded) Arrow strings, numbers
zero-copy, and the ``table_meta_yaml`` that makes an Arrow chunk self-describing (units,
descriptions, UCDs, run metadata) when written to Parquet.
"""

from __future__ import annotations

import numpy as np

from ..catalog.profiles import ColumnInfo
from ..classifier._text import CodedText, int_codes
from ..columns import COLUMNS
from ..stages import STAGES
from .options import table_meta

def is_arrow(obj):
    """Whether ``obj`` is a pyarrow Table or RecordBatch (without importing pyarrow: an object of
    pyarrow can only exist once pyarrow is imported)."""
    if not type(obj).__module__.startswith("pyarrow"):
        return False
    import pyarrow as pa

    return isinstance(obj, (pa.Table, pa.RecordBatch))


def arrow_infos(data, attrs):
    out = []
    for name in data.schema.names:
        info = attrs.get(name, {})
        ucd = (info.get("meta") or {}).get("ucd")
        out.append(ColumnInfo(name, info.get("unit"), ucd))
    return out


#: Our text columns with few distinct values: written as dictionary-encoded Arrow strings
#: (one copy of each text per chunk, integer codes per row).
DICTIONARY_COLUMNS = ("stage", "branch", "mass_method", "hr_source", "flag_text", "sptype_parsed", "sptype_lumclass",
                      "sptype_stage", "sptype_verdict", "sptype_suggested")

_YAML_CACHE: dict = {}


def output_yaml(schema, attrs, opts):
    """``table_meta_yaml`` for an arrow output chunk: the input's column attributes, ours from
    :mod:`hrstage.columns`, the run's metadata; built once per (schema, options)."""
    from ..catalog.arrow import meta_yaml, numpy_dtype_of

    key = (tuple(schema.names), tuple(str(t) for t in schema.types), id(attrs), id(opts.mapping), opts.prefix,
           opts.n_draws, opts.seed, opts.feh)
    hit = _YAML_CACHE.get(key)
    if hit is not None:
        return hit
    col_attrs = {k: v for k, v in (attrs or {}).items() if k != "__table_meta__"}
    for name in COLUMNS:
        full = opts.prefix + name
        if full in schema.names:
            spec = COLUMNS[name]
            col_attrs[full] = {"unit": spec.unit, "description": spec.description,
                               "meta": {"ucd": spec.ucd} if spec.ucd else None}
    run_meta = dict((attrs or {}).get("__table_meta__", {}))
    run_meta.update(table_meta(opts))
    fields = [(f.name, numpy_dtype_of(f.type)) for f in schema]
    yaml = meta_yaml(fields, col_attrs, run_meta)
    if len(_YAML_CACHE) > 64:
        _YAML_CACHE.clear()
    _YAML_CACHE[key] = yaml
    return yaml


def _used_codes(codes):
    """(the distinct codes in use, in order of first appearance; each row's index among them).

    First-appearance order is what ``pyarrow`` ``dictionary_encode`` gives: dictionary pages
    then come out as they did from encoding the row texts.
    """
    codes = np.asarray(codes, dtype=np.int64)
    used, inv = int_codes(codes)
    if len(used) > 1:
        if len(used) <= 64:
            first = np.array([np.argmax(inv == k) for k in range(len(used))])
        else:
            first = np.unique(inv, return_index=True)[1]
        order = np.argsort(first, kind="stable")
        rank = np.empty_like(order)
        rank[order] = np.arange(len(order))
        used, inv = used[order], rank[inv]
    return used, inv


def numpy_to_arrow(values, dictionary: bool = False):
    """One of our columns -> arrow array: text as (dictionary-encoded) strings, numbers zero-copy."""
    import pyarrow as pa

    if isinstance(values, CodedText):   # distinct texts + codes: no per-row string is made
        if not dictionary:
            return pa.array(values.texts, type=pa.string(), from_pandas=False).take(
                pa.array(np.asarray(values.codes, dtype=np.int32)))
        used, codes = _used_codes(values.codes)
        texts = values.texts[used]
        # two codes may carry the same text (e.g. two stages with one mass method): a dictionary
        # holds each text once, in order of first appearance
        slot: dict = {}
        merge = np.array([slot.setdefault(t, len(slot)) for t in texts.tolist()], dtype=np.int64)
        if len(slot) < len(texts):
            texts = np.array(list(slot), dtype=object)
            codes = merge[codes]
        return pa.DictionaryArray.from_arrays(pa.array(codes.astype(np.int32, copy=False)),
                                              pa.array(texts, type=pa.string(), from_pandas=False))
    arr = np.asarray(values)
    if arr.dtype.kind in "UO":
        text = pa.array(arr, type=pa.string(), from_pandas=False)
        return text.dictionary_encode() if dictionary else text
    return pa.array(arr)


#: Our numeric columns with few distinct values (probabilities are multiples of 1/draws, flags a
#: few bit patterns, [Fe/H] used a few grid or input values): dictionary-encoded in a Parquet
#: output, like the texts of :data:`DICTIONARY_COLUMNS`; the other numbers are written plain.
FEW_VALUED_NUMBERS = ("stage_prob", *(f"prob_{s}" for s in STAGES), "flags", "feh_used")


def writer_columns(prefix):
    """``ChunkWriter`` keywords naming our columns (``added``) and those worth a dictionary."""
    return {"added": [prefix + n for n in COLUMNS],
            "added_dictionary": [prefix + n for n in (*DICTIONARY_COLUMNS, *FEW_VALUED_NUMBERS)]}


