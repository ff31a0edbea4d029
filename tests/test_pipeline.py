"""The pipeline face: hrstage.classify, classify_chunk, classify_file.

External checks: the Sun (IAU 2015 Resolution B3: Teff 5772 K, L = 1 Lsun) is a main-sequence star;
APOKASC-3 asteroseismic giants (Pinsonneault et al. 2025, Table 4) come out giants through the
profile detection alone (design bar: >= 97 %); every Hipparcos bright star (van Leeuwen 2007;
ESA 1997) comes out, in order, through the Johnson profile.
"""

from __future__ import annotations

import numpy as np
import pytest
from astropy.table import MaskedColumn, Table

import hrstage
from hrstage import flags as F
from hrstage.catalog import read_table, write_table
from hrstage.columns import CLASSIFY_COLUMNS, COLUMNS
from hrstage.errors import HrstageInputError
from hrstage.pipeline import classify_chunk, classify_file, make_options, resolve_options
from hrstage.stages import STAGES


def small():
    return Table({"name": ["TGT-000001", "TGT-000002", "TGT-000003", "TGT-000004", "TGT-000005"],
                  "teff": [5772.0, 4700.0, 5772.0, 6200.0, 5000.0],
                  "lum": [1.0, 80.0, -9999.0, 2.0, 1.0],
                  "extra": [1, 2, 3, 4, 5]})


def test_classify_needs_no_options_and_keeps_input():
    t = small()
    before = t.copy()
    out = hrstage.classify(t)
    assert out.colnames[:3] == ["name", "teff", "lum"]            # input first, in order
    assert all(c in out.colnames for c in CLASSIFY_COLUMNS)
    assert len(out) == len(t) and list(out["name"]) == list(t["name"])
    for c in t.colnames:
        assert list(t[c]) == list(before[c])                      # input table untouched
        assert list(out[c]) == list(before[c])
    assert set(np.asarray(out["stage"])) <= set(STAGES)
    # the Sun (IAU 2015 B3 nominal Teff 5772 K, L = 1 Lsun) is a main-sequence star
    assert out["stage"][0] == "main_sequence"
    assert out["logl_used"].unit.to_string() == COLUMNS["logl_used"].unit
    assert out.meta["hrstage_profile"] == "direct" and "teff=teff" in out.meta["hrstage_roles"]
    assert "indicative" in out.meta["hrstage_caution"]


def test_unclassified_rows_say_why():
    out = hrstage.classify(small())
    row = out[2]                                                  # lum = -9999 (fill value)
    assert row["stage"] == "unclassified"
    assert row["flags"] & F.MISSING_INPUT
    assert "lum fill value in column lum" in row["flag_text"]
    t = Table({"teff": MaskedColumn([5772.0, 5000.0] + [5500.0] * 20, mask=[True] + [False] * 21),
               "lum": [1.0, -3.0] + [1.0] * 20})
    out = hrstage.classify(t)
    assert out["stage"][0] == "unclassified" and "teff missing" in out["flag_text"][0]
    assert out["stage"][1] == "unclassified" and out["flags"][1] & F.BAD_INPUT
    assert "non-physical" in out["flag_text"][1]


def test_explicit_columns_and_options():
    t = Table({"T": [5772.0, 4500.0], "L": [1.0, 100.0], "fe": [0.0, -0.3]})
    with pytest.raises(HrstageInputError, match="no column profile fits"):
        hrstage.classify(t)
    out = hrstage.classify(t, teff="T", lum="L", feh="fe")
    assert out["stage"][0] == "main_sequence"
    # feh_used is the classifier's metallicity grid point nearest the star's [Fe/H]
    assert out["feh_used"][0] == 0.0 and -0.45 < out["feh_used"][1] < -0.15
    out2 = hrstage.classify(Table({"teff": [5772.0], "lum": [1.0]}), feh=-0.5)
    assert abs(out2["feh_used"][0] + 0.5) < 0.15 and not out2["flags"][0] & F.NO_METALLICITY
    out3 = hrstage.classify(Table({"teff": [5772.0], "lum": [1.0]}))
    assert out3["flags"][0] & F.NO_METALLICITY
    with pytest.raises(HrstageInputError, match="unknown option 'tef'"):
        hrstage.classify(t, tef="T")


def test_name_clash_needs_prefix():
    t = Table({"teff": [5772.0], "lum": [1.0], "stage": ["my own"]})
    with pytest.raises(HrstageInputError, match="prefix"):
        hrstage.classify(t)
    out = hrstage.classify(t, prefix="hrs_")
    assert out["stage"][0] == "my own" and out["hrs_stage"][0] == "main_sequence"


def test_row_wise_fallback_to_logg():
    # row 1 lacks L; log g 4.44 (the Sun, IAU 2015 B3 GM_sun / R_sun^2 -> 4.438) places it instead
    t = Table({"teff": [5772.0, 5772.0], "lum": MaskedColumn([1.0, 1.0], mask=[False, True]),
               "logg": [4.44, 4.44]})
    out = hrstage.classify(t)
    assert out.meta["hrstage_routes"] == "teff_lum,teff_logg"
    assert not str(out["hr_source"][0]).startswith("fallback")
    assert str(out["hr_source"][1]).startswith("fallback to teff_logg")
    assert list(out["stage"]) == ["main_sequence", "main_sequence"]


def test_arrow_chunk_matches_table_path():
    import pyarrow as pa

    t = small()
    from hrstage.catalog import infos_from_table

    opts = resolve_options(infos_from_table(t), make_options())
    a = classify_chunk(t, opts)
    b = classify_chunk(pa.table({c: np.asarray(t[c]) for c in t.colnames}), opts)
    assert b.schema.names == a.colnames
    assert b.column("stage").to_pylist() == list(a["stage"])
    np.testing.assert_array_equal(b.column("logl_used").to_numpy(zero_copy_only=False), np.asarray(a["logl_used"]))


def _population(n, seed=5):
    rng = np.random.default_rng(seed)
    return Table({"star": np.array([f"TGT-{i:06d}" for i in range(n)]),
                  "teff": rng.uniform(3200, 25000, n), "lum": 10 ** rng.uniform(-3, 4, n),
                  "feh": np.round(rng.normal(-0.1, 0.2, n), 2)})


@pytest.mark.parametrize("suffix", [".parquet", ".csv", ".fits"])
def test_streaming_equals_in_memory(tmp_path, suffix):
    t = _population(3000)
    src = tmp_path / f"in{suffix}"
    write_table(t, src)
    whole = hrstage.classify(read_table(src))
    summary = classify_file(src, tmp_path / "out.parquet", chunk_rows=700)
    streamed = read_table(tmp_path / "out.parquet")
    assert summary["rows"] == 3000 and len(streamed) == 3000
    assert list(streamed["star"]) == list(t["star"])
    for c in ("stage", "flags", "flag_text", "hr_source"):
        assert list(streamed[c]) == list(whole[c]), c
    np.testing.assert_array_equal(np.asarray(streamed["logl_used"]), np.asarray(whole["logl_used"]))
    assert sum(summary["stages"].values()) == 3000
    assert streamed["teff_used"].unit == "K"


def test_classify_file_refuses_and_cleans(tmp_path):
    t = _population(50)
    src = tmp_path / "in.ecsv"
    write_table(t, src)
    with pytest.raises(HrstageInputError, match="is the input"):
        classify_file(src, src, overwrite=True)
    bad = Table({"ra": [1.0], "dec": [2.0]})
    write_table(bad, tmp_path / "bad.ecsv")
    with pytest.raises(HrstageInputError, match="no column profile fits bad.ecsv"):
        classify_file(tmp_path / "bad.ecsv", tmp_path / "out.fits")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.ecsv", "in.ecsv"]


def test_apokasc3_giants_by_profile(validation_file):
    # APOKASC-3 Gold alpha-poor RGB + RC (Pinsonneault et al. 2025): design bar >= 97 % giants
    t = read_table(validation_file("apokasc3_gold_apoor_rgb_rc.csv"))
    out = hrstage.classify(t)
    assert out.meta["hrstage_profile"] == "direct" and "radius=Radius" in out.meta["hrstage_roles"]
    assert len(out) == len(t) == 6603                               # SOURCES.md row count
    frac = np.mean(np.asarray(out["stage"]) == "giant")
    assert frac >= 0.97, frac


def test_hipparcos_every_row_out(validation_file):
    # Hipparcos bright stars (van Leeuwen 2007 parallaxes, ESA 1997 V, B-V, SpType): 5112 rows
    t = read_table(validation_file("bright_stars_hip.csv"))
    out = hrstage.classify(t)
    assert len(out) == 5112 and list(out["hip"]) == list(t["hip"])
    assert out.meta["hrstage_profile"] == "johnson"
    assert "sptype_verdict" in out.colnames
    unclassified = np.asarray(out["stage"]) == "unclassified"
    # each unclassified row says why (our input reasons or the classifier's)
    assert unclassified.sum() < 0.05 * len(out)
    assert all(len(str(s)) > 0 for s in out["flag_text"][unclassified])
    assert sum(str(s).startswith("unclassified: no HR position") for s in out["flag_text"][unclassified]) > 0
