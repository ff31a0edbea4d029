"""Parquet writer properties of our output: input columns as pyarrow writes them by default, our
columns with a dictionary only where they have few distinct values; the file reads back the same
through pyarrow and through astropy's own Parquet reader."""

from __future__ import annotations

import warnings

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
from astropy.table import Table

from hrstage.catalog import ChunkWriter
from hrstage.catalog.streaming import parquet_properties
from hrstage.engine import classify_file


def _encodings(path):
    md = pq.read_metadata(path)
    rg = md.row_group(0)
    return {rg.column(i).path_in_schema: (any("DICTIONARY" in e for e in rg.column(i).encodings),
                                          rg.column(i).is_stats_set) for i in range(rg.num_columns)}


def _input(path, n=3000):
    rng = np.random.default_rng(5)
    teff = 10 ** rng.uniform(3.5, 4.4, n)
    pq.write_table(pa.table({"star_id": np.arange(n), "teff": teff, "lum": 10 ** rng.uniform(-2.5, 4.5, n),
                             "feh": np.round(rng.uniform(-1.0, 0.3, n), 2)}), path)


def test_classify_file_parquet_encodings_and_astropy_reads_it(tmp_path):
    src, dst = tmp_path / "in.parquet", tmp_path / "out.parquet"
    _input(src)
    classify_file(src, dst, chunk_rows=1000)
    enc = _encodings(dst)
    for name in ("star_id", "teff", "lum", "feh"):            # input: pyarrow's defaults
        assert enc[name] == (True, True), name
    for name in ("stage", "branch", "mass_method", "hr_source", "flag_text", "prob_giant", "stage_prob", "flags",
                 "feh_used"):
        assert enc[name] == (True, False), name              # few values: dictionary, no statistics
    for name in ("mass_est", "teff_used", "logl_used"):
        assert enc[name] == (False, False), name             # continuous / long texts: plain
    # astropy's reader refuses Arrow dictionary columns: ours are stored as plain strings
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")                       # no table::len:: keys (by design)
        t = Table.read(dst)
    back = pq.read_table(dst)
    assert len(t) == back.num_rows == 3000
    assert list(t["stage"]) == back.column("stage").to_pylist()
    assert str(t["teff_used"].unit) == "K"


def test_chunk_writer_default_unchanged_and_nested_inputs(tmp_path):
    data = pa.table({"x": pa.array([[1.0, 2.0], [1.0]] * 50), "s": pa.array([{"a": 1, "b": "u"}] * 100),
                     "a.b": np.ones(100), "ours": np.arange(100.0),
                     "few": pa.array(["p", "q"] * 50).dictionary_encode()})
    plain = tmp_path / "plain.parquet"
    with ChunkWriter(plain) as w:                             # other callers: pyarrow's defaults
        w.write(data)
    assert all(v == (True, True) for v in _encodings(plain).values())
    assert pq.read_table(plain).schema.field("few").type == data.schema.field("few").type
    tagged = tmp_path / "tagged.parquet"
    with ChunkWriter(tagged, added=["ours", "few", "absent"], added_dictionary=["few"]) as w:
        w.write(data)
    enc = _encodings(tagged)
    # nested input columns are named by their leaf paths, a dotted top-level name is one leaf
    assert enc["x.list.element"] == enc["s.a"] == enc["s.b"] == enc["a.b"] == (True, True)
    assert enc["ours"] == (False, False) and enc["few"] == (True, False)
    back = pq.read_table(tagged)
    assert back.column("few").to_pylist() == ["p", "q"] * 50 and back.schema.field("few").type == pa.string()
    assert back.drop_columns(["few"]).equals(data.drop_columns(["few"]))


def test_parquet_properties_only_input():
    schema = pa.schema([("a", pa.float64()), ("b", pa.int64())])
    assert parquet_properties(schema, added=[]) == {"use_dictionary": ["a", "b"], "write_statistics": ["a", "b"]}
    assert parquet_properties(schema, added=["a", "b"]) == {"use_dictionary": False, "write_statistics": False}


def test_dictionary_columns_written_as_they_are_give_the_same_file(tmp_path, monkeypatch):
    """Plain schema: our Arrow dictionary columns go to the Parquet writer without a cast to
    strings; the file is byte for byte the one written from the cast (dense) strings, whose
    dictionary pyarrow's encoder builds itself (first-appearance order, as ours)."""
    rng = np.random.default_rng(8)
    words = np.array(["main_sequence", "giant", "white_dwarf", "subgiant", ""], dtype=object)

    def chunk(n):
        codes = rng.integers(0, 5, n)
        _, first = np.unique(codes, return_index=True)
        order = np.argsort(first)                 # dictionary in order of first appearance
        rank = np.empty(5, dtype=np.int32)
        rank[np.unique(codes)[order]] = np.arange(order.size)
        d = pa.DictionaryArray.from_arrays(pa.array(rank[codes]), pa.array(list(words[np.unique(codes)[order]])))
        return pa.table({"teff": rng.uniform(3000, 9000, n), "stage": d})

    chunks = [chunk(n) for n in (400, 1, 250)]
    as_is, cast = tmp_path / "as_is.parquet", tmp_path / "cast.parquet"
    import hrstage.catalog.streaming as streaming

    casts = []
    real = streaming._plain_added
    monkeypatch.setattr(streaming, "_plain_added", lambda *a: casts.append(1) or real(*a))
    with ChunkWriter(as_is, added=["stage"], added_dictionary=["stage"]) as w:
        for c in chunks:
            w.write(c)
    assert not casts                              # handed over as they are
    with ChunkWriter(cast, added=["stage"], added_dictionary=["stage"]) as w:
        for c in chunks:
            w.write(c.set_column(1, "stage", c.column("stage").cast(pa.string())))
    assert as_is.read_bytes() == cast.read_bytes()
    back = pq.read_table(as_is)
    assert back.schema.field("stage").type == pa.string()
    assert back.column("stage").to_pylist() == sum((c.column("stage").to_pylist() for c in chunks), [])
