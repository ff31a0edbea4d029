"""Hostile catalogues: every row comes out, in order, with a reason when it cannot be classified.

Contract (design.md, "What every star gets"; issue 8): NaN, infinities, negative or zero
luminosities, zero and negative parallaxes, masked entries, words where numbers belong and
10^6-character fields never crash the pipeline and never drop a row; a row that cannot be placed
on the HR diagram is ``unclassified`` with the reason in ``flag_text`` and the matching flag bit
(``hrstage.flags``). File-level ambiguity (a header naming the same column twice) is a clear
one-line input error, never a traceback. An interrupted write leaves the previous output intact.

All catalogues are invented (``bad_catalogues.py``).
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time

import numpy as np
import pytest

import bad_catalogues as B
from hrstage import flags as F
from hrstage.stages import STAGES

pipeline = pytest.importorskip("hrstage.engine", reason="engine not importable")
from hrstage import classify  # noqa: E402
from hrstage.catalog import read_table, write_table  # noqa: E402
from hrstage.catalog.atomic import TEMP_MARK  # noqa: E402

_CLI = "import sys; sys.argv = ['hrstage'] + sys.argv[1:]; from hrstage.cli import main; sys.exit(main())"


def run_cli(*args, timeout=300):
    """The command line in a fresh process (exit status, stdout, stderr)."""
    env = dict(os.environ, PYTHONWARNINGS="ignore")
    proc = subprocess.run([sys.executable, "-c", _CLI, *map(str, args)], capture_output=True, text=True,
                          timeout=timeout, env=env)
    return proc.returncode, proc.stdout, proc.stderr


def check_rows(out, ids, expect, bits):
    """Row-by-row expectations of bad_catalogues (see its docstring)."""
    assert len(out) == len(ids)
    assert list(np.asarray(out["star_id"]).astype(str)) == list(ids), "rows lost or reordered"
    stage = np.asarray(out["stage"]).astype(str)
    flags = np.asarray(out["flags"], dtype=np.int64)
    text = np.asarray(out["flag_text"]).astype(str)
    assert set(stage) <= set(STAGES)
    problems = []
    for i, (e, b) in enumerate(zip(expect, bits)):
        label = ids[i][:40]
        if e == "ok" and stage[i] == "unclassified":
            problems.append(f"{label}: a plausible star came out unclassified ({text[i]})")
        if e == "reject":
            if stage[i] != "unclassified":
                problems.append(f"{label}: unusable input labelled {stage[i]}")
            if b and not flags[i] & b:
                problems.append(f"{label}: flag bit(s) {F.describe(b)!r} not set (flags={flags[i]})")
        if e in ("reject", "any") and stage[i] == "unclassified" and not text[i].strip():
            problems.append(f"{label}: unclassified without a reason")
        if e == "any" and b and not flags[i] & b:
            problems.append(f"{label}: flag bit(s) {F.describe(b)!r} not set")
    assert not problems, "\n".join(problems)


def test_teff_lum_with_nan_inf_negative_zero_and_masked_values():
    table, expect, bits = B.teff_lum_table()
    before = table.copy(copy_data=True)
    out = classify(table)
    check_rows(out, list(table["star_id"]), expect, bits)
    # input columns untouched (the caller's table too)
    for name in before.colnames:
        np.testing.assert_array_equal(np.ma.getdata(table[name]), np.ma.getdata(before[name]))
        np.testing.assert_array_equal(np.ma.getdata(out[name]), np.ma.getdata(before[name]))


def test_absurd_teff_is_one_bad_row_not_a_failed_catalogue():
    table, expect, bits = B.teff_lum_table(repeat=1, extra_rows=[B.ABSURD_TEFF_ROW])
    out = classify(table)
    check_rows(out, list(table["star_id"]), expect, bits)


def test_parallaxes_zero_negative_nan_inf():
    table, expect, bits = B.gaia_table()
    out = classify(table)
    check_rows(out, list(table["star_id"]), expect, bits)


def test_hostile_table_through_the_cli(tmp_path):
    table, expect, bits = B.teff_lum_table(masked_rows=True)
    src = tmp_path / "hostile.ecsv"
    write_table(table, src)
    dst = tmp_path / "hostile_out.ecsv"
    rc, _, err = run_cli("classify", src, "-o", dst)
    assert rc == 0, err
    check_rows(read_table(dst), list(table["star_id"]), expect, bits)


def test_words_in_numeric_columns(tmp_path):
    path, expect = B.csv_text_in_numbers(tmp_path / "words.csv")
    table = read_table(path)
    ids = list(np.asarray(table["star_id"]).astype(str))
    bits = [F.BAD_INPUT | F.MISSING_INPUT if e == "reject" else 0 for e in expect]
    out = classify(table)
    check_rows(out, ids, expect, [0] * len(bits))
    flags = np.asarray(out["flags"], dtype=np.int64)
    assert all(flags[i] & b for i, b in enumerate(bits) if b)
    dst = tmp_path / "words_out.csv"
    rc, _, err = run_cli("classify", path, "-o", dst)
    assert rc == 0, err
    back = read_table(dst)
    check_rows(back, ids, expect, [0] * len(bits))
    # the reason names the column and quotes the word (decided rule: docs/catalog.md)
    text = np.asarray(back["flag_text"]).astype(str)
    assert "teff not a number in column teff ('hot'" in text[2] and "'5e3K'" in text[9]
    assert "lum not a number in column lum ('1.2.3'" in text[7]


def test_column_of_words_is_the_wrong_type(tmp_path):
    """A numeric role given a column of words is a one-line input error naming the column (exit
    status 2) and nothing is written."""
    src = tmp_path / "words_column.csv"
    src.write_text("star_id,teff,lum\n" + "".join(f"w-{i},K{i}V,{1.0 + i}\n" for i in range(10)))
    dst = tmp_path / "words_column_out.csv"
    rc, _, err = run_cli("classify", src, "-o", dst)
    assert rc == 2 and "column teff" in err and len(err.strip().splitlines()) == 1, err
    assert not dst.exists()


def test_million_character_fields(tmp_path):
    """10^6-character fields (free text, MK type, id) are read, kept whole and classified, both by
    the whole-file reader and through the streaming command line."""
    path, expect = B.csv_huge_fields(tmp_path / "huge.csv")
    table = read_table(path)
    out = classify(table)
    ids = list(np.asarray(table["star_id"]).astype(str))
    check_rows(out, ids, expect, [0] * len(expect))
    assert len(str(out["note"][1])) == B.HUGE and len(ids[3]) == 6 + B.HUGE
    dst = tmp_path / "huge_out.parquet"
    rc, _, err = run_cli("classify", path, "-o", dst)
    assert rc == 0, err[-500:]
    back = read_table(dst)
    assert len(back) == len(ids) and len(str(back["note"][1])) == B.HUGE
    assert list(np.asarray(back["stage"]).astype(str)) == list(np.asarray(out["stage"]).astype(str))


def test_million_character_mk_type_is_not_accepted(tmp_path):
    """An MK type of 10^6 characters is reported as not understood, not read as a K0 V type."""
    path, _ = B.csv_huge_fields(tmp_path / "huge.csv")
    out = classify(read_table(path))
    assert np.asarray(out["flags"], dtype=np.int64)[2] & F.SPTYPE_UNPARSED or \
        "unparsed" in str(out["sptype_verdict"][2]).lower()


def test_duplicate_column_names_in_csv_header(tmp_path):
    """A header that names ``teff`` twice is ambiguous (which Teff?): a one-line input error that
    names the column (exit status 2), or every row written — never a traceback, never a guess
    made silently."""
    path = B.csv_duplicate_header(tmp_path / "dup.csv")
    dst = tmp_path / "dup_out.csv"
    rc, out, err = run_cli("classify", path, "-o", dst)
    assert "Traceback" not in err, err[-800:]
    if rc == 0:
        back = read_table(dst)
        assert len(back) == 6
        assert sum(name.startswith("teff") for name in back.colnames) == 2
    else:
        assert rc == 2
        assert "teff" in err and "dup" in err.lower() and len(err.strip().splitlines()) <= 2
        assert not dst.exists()


# --- interrupted writes -----------------------------------------------------------------------
def _leftovers(folder):
    return [p.name for p in folder.iterdir() if TEMP_MARK in p.name]


def test_writer_failing_half_way_keeps_previous_output(tmp_path, monkeypatch):
    """In-process: the chunk writer raises on its second chunk; the previous output is intact
    byte for byte and no temporary file is left."""
    import hrstage.catalog as cat
    from hrstage.engine import classify_file

    src = tmp_path / "stars.parquet"
    _write_big_parquet(src, 500)
    dst = tmp_path / "staged.parquet"
    classify_file(src, dst, chunk_rows=50)
    before = dst.read_bytes()

    real_write = cat.ChunkWriter.write
    calls = {"n": 0}

    def failing(self, chunk):
        calls["n"] += 1
        if calls["n"] == 2:
            raise OSError("disk full (simulated)")
        return real_write(self, chunk)

    monkeypatch.setattr(cat.ChunkWriter, "write", failing)
    with pytest.raises(OSError, match="simulated"):
        classify_file(src, dst, chunk_rows=50, overwrite=True)
    assert calls["n"] == 2
    assert dst.read_bytes() == before
    assert _leftovers(tmp_path) == []


def _write_big_parquet(path, rows):
    import pyarrow as pa
    import pyarrow.parquet as pq

    rng = np.random.default_rng(1)
    pq.write_table(pa.table({"teff": 10 ** rng.uniform(3.5, 4.3, rows), "lum": 10 ** rng.uniform(-2, 4, rows)}),
                   path, row_group_size=20_000)


@pytest.mark.parametrize("sig", [signal.SIGINT, signal.SIGKILL], ids=["interrupt", "kill"])
def test_killed_cli_keeps_previous_output(tmp_path, sig):
    """A real process stopped mid-write (Ctrl-C, or SIGKILL that allows no clean-up) never
    touches the previous output; after Ctrl-C no temporary file is left either."""
    src = tmp_path / "big.parquet"
    _write_big_parquet(src, 2_000_000)
    dst = tmp_path / "out.parquet"
    dst.write_bytes(b"previous output, must survive")
    before = dst.read_bytes()
    env = dict(os.environ, PYTHONWARNINGS="ignore")
    proc = subprocess.Popen([sys.executable, "-c", _CLI, "classify", str(src), "-o", str(dst), "--overwrite",
                             "--chunk-rows", "20000"], stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, env=env)
    t0 = time.monotonic()
    while not _leftovers(tmp_path) and proc.poll() is None and time.monotonic() - t0 < 120:
        time.sleep(0.02)
    assert _leftovers(tmp_path), "the CLI finished before writing a temporary file: make the input larger"
    proc.send_signal(sig)               # mid-write: the temporary output exists, chunks are being added
    proc.wait(timeout=60)
    proc.stderr.close()
    assert proc.returncode != 0
    assert dst.read_bytes() == before
    if sig == signal.SIGINT:
        assert _leftovers(tmp_path) == []
