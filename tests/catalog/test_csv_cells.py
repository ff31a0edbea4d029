"""The vectorised CSV writer (formats.arrow_csv) against a plain Python formatter of the rules in
its docstring, cell by cell, on tables made to reach every path of the writer: values formatted
once per distinct value and gathered (few-valued columns) or one by one (many-valued), float32 and
float64 across Python's positional/exponent boundaries 1e-4 and 1e16 and pyarrow's own (1e-6),
negative zero, NaN, inf, nulls, subnormals, the largest values; plain, large and
dictionary-encoded text with commas, quotes and line ends; several slices and chunks; one-column
and empty tables.

The reference formatter writes floats with Python's ``repr`` (float64) or numpy's shortest
single-precision digits in Python's layout (float32), both independent of pyarrow."""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pytest

from hrstage.catalog import formats
from hrstage.catalog.formats import arrow_csv


def _float32_text(v):
    """Shortest float32 digits in Python's layout (positional for 1e-4 <= |x| < 1e16, with ".0"
    on whole numbers; exponent form otherwise): numpy's formatters (common practice)."""
    v = np.float32(v)
    if not np.isfinite(v):
        return "nan" if np.isnan(v) else ("inf" if v > 0 else "-inf")
    if v == 0 or 1e-4 <= abs(v) < 1e16:
        return np.format_float_positional(v, unique=True, trim="0")
    return np.format_float_scientific(v, unique=True, trim="-", exp_digits=2)


def _cell(value, typ, single):
    if value is None:
        return '""' if single else ""
    if pa.types.is_dictionary(typ):
        typ = typ.value_type
    if pa.types.is_float32(typ):
        text = _float32_text(value)
    elif pa.types.is_floating(typ):
        text = repr(float(value))                   # Python's shortest round-trip text
    elif pa.types.is_boolean(typ):
        text = "True" if value else "False"
    elif pa.types.is_integer(typ):
        text = str(int(value))
    else:
        text = value
        if any(c in text for c in ',"\r\n'):
            text = '"' + text.replace('"', '""') + '"'
    return '""' if single and text == "" else text


def _reference(data: pa.Table) -> bytes:
    """The CSV text of ``data`` by the rules of arrow_csv's docstring, one cell at a time."""
    single = data.num_columns == 1
    names = [formats._csv_name(n, single) for n in data.schema.names]
    lines = [",".join(names)]
    columns = [(data.column(i).to_pylist(), data.schema.field(i).type) for i in range(data.num_columns)]
    for r in range(data.num_rows):
        lines.append(",".join(_cell(vals[r], typ, single) for vals, typ in columns))
    return ("\n".join(lines) + "\n").encode("utf-8")


def _floats(rng, n, dtype):
    """Values across every boundary of the float layouts, and bit patterns of every kind."""
    width = np.uint32 if dtype == np.float32 else np.uint64
    bits = rng.integers(0, np.iinfo(width).max, n, dtype=width, endpoint=True).view(dtype)
    scales = np.array([1e-4, 1e-5, 1e-6, 1e-7, 1e16, 1e15, 1e17, 1e-30, 1e30, 1.0])
    scaled = (rng.uniform(0.5, 2.0, n) * rng.choice(scales, n) * rng.choice([-1, 1], n)).astype(dtype)
    with np.errstate(over="ignore"):
        special = np.array([0.0, -0.0, np.nan, -np.nan, np.inf, -np.inf, 1e-4, 1e16, 9.999999e-5,
                            1e-6, 2.0 ** 53, 2.0 ** 52 + 0.5, 5e-324, 1e-45, 3.4028235e38,
                            1.7976931348623157e308, 30640.0, -1.0], dtype=dtype)
    whole = np.round(rng.normal(0, 1e6, n)).astype(dtype)
    return np.concatenate([special, bits, scaled, whole])[:n]


def _varied(n=5000, seed=3):
    rng = np.random.default_rng(seed)
    nulls = rng.random(n) < 0.1
    f64, f32 = _floats(rng, n, np.float64), _floats(rng, n, np.float32)
    steps = (rng.integers(0, 21, n) / 20).astype(np.float32)          # probabilities, 20 draws
    tiny = np.where(rng.random(n) < 0.3, np.float32(3.1e-5), steps).astype(np.float32)
    pieces = ["main", "giant", 'he said "x"', "a,b", "line\nend", "cr\rx", "", "\u00e9t\u00e9", " pad "]
    words = [pieces[i] for i in rng.integers(0, len(pieces), n)]
    unique_words = [f"w{i}" + ("," if i % 7 == 0 else "") for i in range(n)]
    return pa.table({
        "f64": f64, "f64_null": pa.array(f64, mask=nulls), "f32": f32, "f32_null": pa.array(f32, mask=nulls),
        "steps": steps, "steps_null": pa.array(steps, mask=nulls), "tiny": tiny,
        "grid": np.round(rng.uniform(-1, 0.5, n) * 4) / 4, "f16": np.ones(n, dtype=np.float16) / 3,
        "neg_zero": np.where(rng.random(n) < 0.5, -0.0, 0.0), "all_nan": np.full(n, np.nan, dtype=np.float32),
        "i": np.arange(n) - 7, "u8": rng.integers(0, 255, n).astype(np.uint8),
        "flag": rng.random(n) < 0.5, "flag_null": pa.array(rng.random(n) < 0.5, mask=nulls),
        "text": pa.array(words, mask=nulls), "large": pa.array(words, type=pa.large_string()),
        "dict": pa.array(words).dictionary_encode(),
        "dict_large": pa.array(words, type=pa.large_string()).dictionary_encode(),
        "plain_text": pa.array(["abc"] * n), "unique_text": unique_words,
    })


def test_every_column_kind_cell_by_cell(monkeypatch):
    data = _varied()
    assert arrow_csv(data) == _reference(data)
    monkeypatch.setattr(formats, "CSV_SLICE_ROWS", 777)        # several slices of the gathered columns
    assert arrow_csv(data) == _reference(data)
    assert arrow_csv(data, header=False) == _reference(data).split(b"\n", 1)[1]


def test_chunked_columns_and_record_batches(monkeypatch):
    data = _varied(3000, seed=8)
    chunked = pa.Table.from_batches(data.to_batches(max_chunksize=700))
    monkeypatch.setattr(formats, "CSV_SLICE_ROWS", 1000)       # slices across chunk edges
    assert arrow_csv(chunked) == _reference(data)
    assert arrow_csv(data.to_batches()[0]) == _reference(data)


@pytest.mark.parametrize("name", ["f64_null", "f32", "steps_null", "flag_null", "i", "text", "dict", "large",
                                  "plain_text"])
def test_one_column_tables(name):
    one = _varied(1200, seed=5).select([name])
    assert arrow_csv(one) == _reference(one)


def test_empty_and_tiny_tables():
    data = _varied(50, seed=1)
    assert arrow_csv(data.slice(0, 0)) == _reference(data.slice(0, 0))
    for n in (1, 2, 63, 64, 65):                     # below and above the size where values are counted
        assert arrow_csv(data.slice(0, n)) == _reference(data.slice(0, n)), n
    assert arrow_csv(pa.table({"x": pa.array([], pa.float32())})) == b"x\n"


@pytest.mark.parametrize("dtype", [np.float64, np.float32])
def test_exponent_forms_rewritten_from_pyarrow_text(dtype):
    """Python's exponent forms come from pyarrow's text by rewriting (no value-by-value fallback
    needed for numbers pyarrow writes as ``1e-7``, ``0.000031`` or ``1.5e+17``)."""
    import pyarrow.compute as pc

    rng = np.random.default_rng(11)
    exps = rng.integers(-40 if dtype == np.float32 else -320, 0, 3000)
    tiny = (rng.uniform(1, 10, 3000) * 10.0 ** exps).astype(dtype)
    tiny = tiny[(tiny != 0) & (np.abs(tiny) < 1e-4)]
    big = (rng.uniform(1, 10, 2000) * 10.0 ** rng.integers(16, 38, 2000)).astype(dtype)
    vals = np.concatenate([tiny, -tiny, big, np.array([3.1e-5, 1e-5, 1.2e-6, 1e16], dtype=dtype)])
    text, ok = formats._exponent_layout(pc.cast(pa.array(vals), pa.string()))
    assert ok.all()
    want = [_float32_text(v) if dtype == np.float32 else repr(float(v)) for v in vals]
    assert text.to_pylist() == want
