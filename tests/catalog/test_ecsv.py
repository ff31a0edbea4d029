"""ECSV output (hrstage.catalog.ecsv.write_ecsv) against astropy's own ECSV writer, the outside
reference: the file must be byte for byte what ``Table.write(format="ascii.ecsv")`` writes, for
every column kind (the whole-column conversion covers numbers, booleans and text; other kinds go
through astropy's per-cell formatting)."""

from __future__ import annotations

import numpy as np
import pytest
from astropy import units as u
from astropy.table import Column, MaskedColumn, Table

from hrstage.catalog import read_table, write_table
from hrstage.catalog.ecsv import write_ecsv


def _same_as_astropy(table, tmp_path):
    ours, ref = tmp_path / "ours.ecsv", tmp_path / "astropy.ecsv"
    write_ecsv(table, ours)
    table.write(ref, format="ascii.ecsv")       # the reference: astropy's writer
    assert ours.read_bytes() == ref.read_bytes()


def _awkward_floats(rng, n):
    x = rng.normal(0, 1, n) * 10.0 ** rng.integers(-40, 40, n)
    x[:12] = [0.0, -0.0, np.nan, np.inf, -np.inf, 1e16, 1e-5, 5e-324, 1.7976931348623157e308, 0.1, 1 / 3, 6023.0]
    return x


def test_numbers_booleans_text_and_masks(tmp_path):
    rng = np.random.default_rng(3)
    n = 500
    f8 = _awkward_floats(rng, n)
    mask = rng.random(n) < 0.2
    t = Table()
    t["f8"] = Column(f8, unit=u.K, description="a float", meta={"ucd": "phys.temperature"})
    with np.errstate(over="ignore"):
        t["f4"] = f8.astype(np.float32)
    t["f2"] = rng.normal(0, 100, n).astype(np.float16)
    t["i8"] = rng.integers(-2**62, 2**62, n)
    t["u1"] = rng.integers(0, 255, n).astype(np.uint8)
    t["b"] = rng.random(n) < 0.5
    t["text"] = np.array(["plain", "two words", 'quote "inside"', "", "comma,here", "ünïcode"])[rng.integers(0, 6, n)]
    t["masked_f"] = MaskedColumn(f8, mask=mask)
    t["masked_i"] = MaskedColumn(rng.integers(0, 9, n), mask=mask)
    t["masked_text"] = MaskedColumn(np.array(["a", "b c", ""])[rng.integers(0, 3, n)], mask=mask)
    t["masked_b"] = MaskedColumn(rng.random(n) < 0.5, mask=mask)
    t.meta["note"] = "run metadata"
    _same_as_astropy(t, tmp_path)


def test_object_and_multidimensional_columns_keep_astropys_formatting(tmp_path):
    n = 6
    t = Table()
    t["obj_text"] = np.array(["x", "y z", 'q"', "", "x", "ü"], dtype=object)
    t["obj_mixed"] = np.array([1, "a", 2.5, None, True, [1, 2]], dtype=object)
    t["vec"] = np.arange(3 * n, dtype=float).reshape(n, 3)
    t["masked_obj"] = MaskedColumn(np.array(["a", "b", "c", "d", "e", "f"], dtype=object),
                                   mask=[0, 1, 0, 0, 1, 0])
    t["q"] = np.arange(n) * u.km
    _same_as_astropy(t, tmp_path)


@pytest.mark.parametrize("rows", [0, 1])
def test_tiny_tables(tmp_path, rows):
    t = Table({"a": np.arange(rows, dtype=float), "s": np.array(["x y"] * rows, dtype=str)})
    _same_as_astropy(t, tmp_path)


def test_write_table_ecsv_round_trip(tmp_path):
    t = Table({"teff": [5772.0, np.nan], "name": ["star a", ""]})
    t["teff"].unit = u.K
    out = write_table(t, tmp_path / "out.ecsv")
    back = read_table(out)
    assert back["teff"].unit == u.K
    assert np.isnan(back["teff"][1]) and back["name"][0] == "star a" and back["name"][1] == ""
