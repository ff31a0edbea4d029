"""Chunked reading and writing: same rows in the same order, atomic output, bounded memory."""

from __future__ import annotations

import subprocess
import sys
import textwrap

import numpy as np
import pytest
from astropy.table import Table, vstack

from hrstage.catalog import ChunkWriter, count_rows, iter_chunks, read_table, write_table
from hrstage.catalog.atomic import TEMP_MARK
from hrstage.errors import HrstageInputError

SUFFIX = {"fits": ".fits", "votable": ".vot", "ecsv": ".ecsv", "csv": ".csv", "parquet": ".parquet"}


def table(n):
    rng = np.random.default_rng(11)
    return Table({"star": np.array([f"TGT-{i:06d}" for i in range(n)]),
                  "teff": rng.uniform(3000, 30000, n), "lum": rng.lognormal(0, 2, n),
                  "k": np.arange(n, dtype=np.int64)})


@pytest.mark.parametrize("fmt", list(SUFFIX))
def test_chunks_reassemble_to_the_whole(tmp_path, fmt):
    t = table(2500)
    p = tmp_path / f"in{SUFFIX[fmt]}"
    write_table(t, p)
    chunks = list(iter_chunks(p, 700))
    if fmt != "csv":  # CSV chunks are sized in bytes (blocks of at least 4 MiB)
        assert [len(c) for c in chunks] == [700, 700, 700, 400]
    whole = vstack(chunks)
    assert list(whole["k"]) == list(range(2500))
    np.testing.assert_array_equal(np.asarray(whole["teff"]), np.asarray(t["teff"]))
    assert list(whole["star"]) == list(t["star"])
    if fmt in ("parquet", "fits"):
        assert count_rows(p) == 2500


@pytest.mark.parametrize("fmt", list(SUFFIX))
def test_chunk_writer_equals_whole_write(tmp_path, fmt):
    t = table(1000)
    p = tmp_path / f"out{SUFFIX[fmt]}"
    with ChunkWriter(p) as w:
        for start in range(0, 1000, 300):
            w.write(t[start:start + 300])
    back = read_table(p)
    assert len(back) == 1000 and list(back["k"]) == list(range(1000))
    np.testing.assert_array_equal(np.asarray(back["lum"]), np.asarray(t["lum"]))
    assert [q.name for q in tmp_path.iterdir()] == [p.name]


def test_csv_streams_in_several_blocks(tmp_path):
    p = tmp_path / "big.csv"
    n = 250_000
    p.write_text("k,x\n" + "".join(f"{i},{i * 0.001:.6f}\n" for i in range(n)))
    chunks = list(iter_chunks(p, 50_000))
    assert len(chunks) >= 2
    assert list(vstack(chunks)["k"]) == list(range(n))


def test_failure_midway_leaves_no_output(tmp_path):
    t = table(100)
    p = tmp_path / "out.parquet"
    with pytest.raises(RuntimeError):
        with ChunkWriter(p) as w:
            w.write(t[:50])
            raise RuntimeError("boom")
    assert list(tmp_path.iterdir()) == []
    # an existing output stays as it was when a replacement fails
    write_table(t[:3], p)
    before = p.read_bytes()
    with pytest.raises(RuntimeError):
        with ChunkWriter(p, overwrite=True) as w:
            w.write(t)
            raise RuntimeError("boom")
    assert p.read_bytes() == before
    assert not any(TEMP_MARK in q.name for q in tmp_path.iterdir())


def test_csv_bad_row_deep_in_file(tmp_path):
    p = tmp_path / "big.csv"
    lines = ["teff,lum"] + [f"{5000 + i},{1.0 + i}" for i in range(20000)] + ["6000"] + ["7000,2.0"]
    p.write_text("\n".join(lines) + "\n")
    with pytest.raises(HrstageInputError, match="big.csv") as info:
        for _ in iter_chunks(p, 1000):
            pass
    assert "Expected 2 columns" in str(info.value) and "\n" not in str(info.value)


def test_bad_chunk_size(tmp_path):
    write_table(table(3), tmp_path / "a.parquet")
    with pytest.raises(HrstageInputError, match="positive"):
        next(iter_chunks(tmp_path / "a.parquet", 0))


_CHILD = textwrap.dedent("""
    import resource, sys
    import numpy as np
    import pyarrow, pyarrow.parquet, pyarrow.compute   # imports are not the data's memory
    from hrstage.catalog import ChunkWriter, iter_chunks, read_table, write_table
    src, dst, mode, chunk = sys.argv[1], sys.argv[2], sys.argv[3], int(sys.argv[4])
    np.zeros(1)  # imports done
    before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    if mode == "whole":
        write_table(read_table(src), dst)
    else:
        with ChunkWriter(dst) as w:
            for c in iter_chunks(src, chunk):
                w.write(c)
    after = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    print(after - before)
""")


@pytest.mark.slow
def test_streaming_memory_is_bounded(tmp_path):
    """300 k rows x 16 float columns (38 MB of data): streaming in 10 k-row chunks must grow the
    peak resident memory far less than reading the whole file (loose bound: < 50 %)."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    n = 300_000
    rng = np.random.default_rng(0)
    data = pa.table({f"c{i}": rng.normal(size=n) for i in range(16)})
    src = tmp_path / "big.parquet"
    pq.write_table(data, src, row_group_size=20_000)
    del data
    growth = {}
    for mode in ("whole", "stream"):
        out = subprocess.run([sys.executable, "-c", _CHILD, str(src), str(tmp_path / f"{mode}.parquet"),
                              mode, "10000"], capture_output=True, text=True, check=True)
        growth[mode] = int(out.stdout.strip().splitlines()[-1])     # KiB (Linux ru_maxrss)
    assert growth["stream"] < 0.5 * growth["whole"], growth
