"""The vectorised CSV writer (formats.arrow_csv, used by csv_text and the chunk writer) against
astropy's own CSV writer (``Table.write(format="ascii.csv")``, the reference for our CSV text)
and against pyarrow's CSV reader (every value reads back exactly)."""

from __future__ import annotations

import io
import warnings

import numpy as np
import pyarrow as pa
import pyarrow.csv as pacsv
import pytest
from astropy.table import MaskedColumn, Table

from hrstage.catalog import ChunkWriter, read_table
from hrstage.catalog.arrow import table_to_arrow
from hrstage.catalog.formats import arrow_csv, csv_supported, csv_text


def _single_text(v):
    """Shortest digits of a float32 in Python's layout (positional for 1e-4 <= |x| < 1e16, with a
    ".0" on whole numbers; exponent form otherwise), written out with numpy's formatters."""
    v = np.float32(v)
    if not np.isfinite(v):
        return str(v)
    if v == 0 or 1e-4 <= abs(v) < 1e16:
        return np.format_float_positional(v, unique=True, trim="0")
    return np.format_float_scientific(v, unique=True, trim="-", exp_digits=2)


def _astropy_text(table):
    """astropy's CSV text, except that single-precision columns show their own shortest digits
    (:func:`_single_text`, issue 16 item 4), where astropy writes the double they equal."""
    table = table.copy()
    for name in table.colnames:
        col = table[name]
        if col.dtype == np.float32:
            text = np.array([_single_text(v) for v in np.asarray(col)], dtype=object)
            table[name] = MaskedColumn(text, mask=np.ma.getmaskarray(col)) if hasattr(col, "mask") else text
    buf = io.StringIO()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        table.write(buf, format="ascii.csv")
    return buf.getvalue()


def _hostile(n=4000, seed=2):
    rng = np.random.default_rng(seed)
    bits = rng.integers(0, 2**64, n, dtype=np.uint64).view(np.float64)   # every kind of double
    bits[:6] = [np.nan, np.inf, -np.inf, 0.0, -0.0, 5e-324]
    pieces = list('ab ,"\n;#\u00e9\t') + ["xyz", ""]
    words = np.array(["".join(rng.choice(pieces, rng.integers(0, 6))) for _ in range(n)], dtype=object)
    return Table({
        "i": np.arange(n) - 5, "u": rng.integers(0, 2**63, n).astype(np.uint64), "bits": bits,
        "scaled": rng.normal(size=n) * 10 ** rng.uniform(-8, 20, n),
        "single": (rng.normal(size=n) * 10.0 ** rng.integers(-10, 20, n)).astype(np.float32),
        "masked_f": MaskedColumn(rng.normal(size=n), mask=rng.random(n) < 0.3),
        "flag": rng.random(n) < 0.5, "masked_b": MaskedColumn(rng.random(n) < 0.5, mask=rng.random(n) < 0.3),
        "masked_i": MaskedColumn(np.arange(n), mask=rng.random(n) < 0.3),
        "text": words, "masked_text": MaskedColumn(words, mask=rng.random(n) < 0.3),
        "whole": np.round(rng.normal(size=n) * 1e4, 0), "we,ird \"name\"": np.ones(n),
    })


def test_same_text_as_astropy_for_every_column_kind():
    t = _hostile()
    assert csv_text(t) == _astropy_text(t)
    assert arrow_csv(table_to_arrow(t, with_meta=False)).decode() == _astropy_text(t)
    for name in t.colnames:                     # one-column tables: astropy writes "" for empty
        assert csv_text(t[[name]]) == _astropy_text(t[[name]]), name
    assert csv_text(t, header=False) == _astropy_text(t).split("\n", 1)[1]


def test_dictionary_and_large_strings_and_empty():
    data = pa.table({"d": pa.array(["a,b", None, "c"]).dictionary_encode(),
                     "l": pa.array(['q"', "", None], type=pa.large_string()), "x": [1.0, None, 3.0]})
    assert csv_supported(data.schema)
    assert arrow_csv(data) == b'd,l,x\n"a,b","q""",1.0\n,,\nc,,3.0\n'
    assert arrow_csv(data.slice(0, 0)) == b"d,l,x\n"
    assert not csv_supported(pa.schema([("t", pa.timestamp("s"))]))


def test_values_read_back_exactly_through_pyarrow():
    t = _hostile(seed=9)
    back = pacsv.read_csv(io.BytesIO(arrow_csv(table_to_arrow(t, with_meta=False))),
                          convert_options=pacsv.ConvertOptions(strings_can_be_null=False))
    for name in ("bits", "scaled", "whole"):
        a, b = np.asarray(t[name]), back.column(name).to_numpy()
        assert back.column(name).type == pa.float64()      # whole numbers keep their ".0"
        assert np.array_equal(a.view(np.int64)[np.isfinite(a)], b.view(np.int64)[np.isfinite(a)])
        assert np.array_equal(np.isnan(a), np.isnan(b))
    # single precision: its shortest text reads back as the same float32 (issue 16 item 4)
    single = np.asarray(t["single"])
    got = back.column("single").to_numpy()
    assert np.array_equal(got.astype(np.float32), single)
    fin = np.isfinite(single)
    assert np.array_equal(got[fin], np.array([float(_single_text(v)) for v in single[fin]]))
    assert back.column("text").to_pylist() == list(t["text"])


def test_deliberate_differences_from_astropy():
    # a carriage return inside a text cell is quoted (astropy leaves it bare: readers see two lines)
    t = Table({"s": np.array(["r\rr", "ok"], dtype=object), "k": [1, 2]})
    assert csv_text(t) == 's,k\n"r\rr",1\nok,2\n'
    assert pacsv.read_csv(io.BytesIO(csv_text(t).encode())).column("s").to_pylist() == ["r\rr", "ok"]
    # fixed-width text keeps its blanks (astropy strips them from "U" columns)
    t = Table({"s": np.array([" a", "b "])})
    assert csv_text(t) == "s\n a\nb \n"


@pytest.mark.parametrize("kind", ["arrow", "astropy"])
def test_chunk_writer_csv_streams_the_same_text(tmp_path, kind):
    t = _hostile(1500, seed=4)
    t.remove_column("we,ird \"name\"")
    p = tmp_path / "out.csv"
    with ChunkWriter(p) as w:
        for start in range(0, len(t), 400):
            part = t[start:start + 400]
            w.write(table_to_arrow(part, with_meta=False) if kind == "arrow" else part)
    assert p.read_bytes().decode("utf-8") == _astropy_text(t)
    assert len(read_table(p)) == 1500


def test_columns_astropy_must_format_fall_back():
    t = Table({"x": [1.23456, 2.5], "y": [1, 2]})
    t["x"].info.format = ".2f"                  # a display format: astropy's writer applies it
    assert csv_text(t) == _astropy_text(t) == "x,y\n1.23,1\n2.50,2\n"


def test_single_precision_and_exact_inputs_keep_their_digits(tmp_path):
    """Issue 16 item 4: ``mass_est`` (float32) was written 1.1643750667572021 and ``teff_used``
    6023.000000000001 for an input Teff of 6023 (through 10**log10)."""
    from hrstage.engine import classify_file

    t = Table({"teff": [6023.0, 5777.0, 4321.5, 7001.0], "lum": [1.6, 1.0, 0.3, 4.4]})
    t["x32"] = np.array([1.1643750667572021, 0.1, 1e-5, 123456.78], dtype=np.float32)
    assert csv_text(t[["x32"]]) == "x32\n1.1643751\n0.1\n1e-05\n123456.78\n"    # shortest float32 digits
    src = tmp_path / "in.ecsv"
    t.write(src)
    out = tmp_path / "out.csv"
    classify_file(src, out, n_draws=0)
    rows = out.read_text().splitlines()
    head = rows[0].split(",")
    teff_used = [r.split(",")[head.index("teff_used")] for r in rows[1:]]
    assert teff_used == ["6023.0", "5777.0", "4321.5", "7001.0"]
    mass = [r.split(",")[head.index("mass_est")] for r in rows[1:]]
    assert all(len(m.replace(".", "").replace("-", "").lstrip("0")) <= 9 for m in mass), mass
