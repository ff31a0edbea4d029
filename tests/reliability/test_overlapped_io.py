"""classify_file reads the next chunk and writes the previous one in background threads: errors
of either thread come out unchanged, abort the atomic output and leave no thread running."""

from __future__ import annotations

import threading

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from hrstage.catalog.atomic import TEMP_MARK
from hrstage.errors import HrstageInputError
from hrstage.engine import classify_file


def _io_threads():
    return [t for t in threading.enumerate() if t.name.startswith("hrstage-io")]


def _leftovers(folder):
    return [p.name for p in folder.iterdir() if TEMP_MARK in p.name]


def _parquet(path, rows=3000):
    rng = np.random.default_rng(3)
    pq.write_table(pa.table({"teff": 10 ** rng.uniform(3.5, 4.3, rows), "lum": 10 ** rng.uniform(-2, 4, rows)}),
                   path, row_group_size=500)


@pytest.mark.parametrize("workers", [1, 2])
def test_bad_csv_row_deep_in_file_is_one_line_and_leaves_previous_output(tmp_path, workers):
    src = tmp_path / "deep.csv"
    lines = ["teff,lum"] + [f"{5000 + i % 900},{1.0 + i % 7}" for i in range(300_000)] + ["6000"]
    src.write_text("\n".join(lines) + "\n")
    dst = tmp_path / "out.parquet"
    dst.write_bytes(b"previous")
    with pytest.raises(HrstageInputError, match="deep.csv") as info:
        classify_file(src, dst, overwrite=True, chunk_rows=20_000, workers=workers)
    assert "\n" not in str(info.value) and "Expected 2 columns" in str(info.value)
    assert dst.read_bytes() == b"previous" and _leftovers(tmp_path) == []
    assert _io_threads() == []


def test_first_write_failing_stops_the_run(tmp_path, monkeypatch):
    import hrstage.catalog as cat

    src, dst = tmp_path / "in.parquet", tmp_path / "out.parquet"
    _parquet(src)
    calls = {"n": 0}

    def failing(self, chunk):
        calls["n"] += 1
        raise RuntimeError("no space left (simulated)")

    monkeypatch.setattr(cat.ChunkWriter, "write", failing)
    with pytest.raises(RuntimeError, match="simulated"):
        classify_file(src, dst, chunk_rows=500)
    assert calls["n"] == 1 and not dst.exists() and _leftovers(tmp_path) == []
    assert _io_threads() == []


def test_interrupt_while_classifying_waits_for_the_write(tmp_path, monkeypatch):
    """Ctrl-C in the main thread (here: raised by the classification of the third chunk) aborts
    the output only after the chunk being written in the background is finished."""
    import hrstage.catalog as cat
    import hrstage.engine.files as pl

    src, dst = tmp_path / "in.parquet", tmp_path / "out.parquet"
    _parquet(src)
    dst.write_bytes(b"previous")
    real_write, real_classify = cat.ChunkWriter.write, pl.classify_one
    state = {"writing": 0, "overlap_seen": False, "calls": 0}

    def slow_write(self, chunk):
        state["writing"] += 1
        try:
            threading.Event().wait(0.2)
            return real_write(self, chunk)
        finally:
            state["writing"] -= 1

    def classify(chunk, opts, offset, attrs):
        state["calls"] += 1
        if state["calls"] == 3:
            for _ in range(100):            # the write of chunk 2 starts in its thread
                if state["writing"]:
                    break
                threading.Event().wait(0.005)
            state["overlap_seen"] = state["writing"] > 0
            raise KeyboardInterrupt
        return real_classify(chunk, opts, offset, attrs)

    monkeypatch.setattr(cat.ChunkWriter, "write", slow_write)
    monkeypatch.setattr(pl, "classify_one", classify)
    with pytest.raises(KeyboardInterrupt):
        classify_file(src, dst, chunk_rows=500, overwrite=True)
    assert state["overlap_seen"]          # the second chunk was being written meanwhile
    assert state["writing"] == 0
    assert dst.read_bytes() == b"previous" and _leftovers(tmp_path) == []
    assert _io_threads() == []
