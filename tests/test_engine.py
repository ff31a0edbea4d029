"""The run engine (hrstage.engine): hrstage.classify, classify_chunk, classify_file.

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
from hrstage.engine import classify_chunk, classify_file, make_options, resolve_options
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


def test_reasons_in_words_by_default_with_numbers_on_request():
    # a 4000 K star of 3.2e4 Lsun given 11 Msun: cool but massive (formulae.md 2.9 [C]: a 10 Msun star
    # ignites He near 2.5e4 Lsun, 3661 K); the Sun (IAU 2015 B3) is not flagged
    t = Table({"teff": [4000.0, 5772.0], "lum": [3.2e4, 1.0], "mass": [11.0, 1.0]})
    plain = hrstage.classify(t)
    assert "flag_detail" not in plain.colnames
    assert plain["flag_text"][0].startswith("cool but massive") and "M_MS(L)=" not in plain["flag_text"][0]
    both = hrstage.classify(t, add_columns="all,flag_detail")
    assert both.colnames.index("flag_detail") == both.colnames.index("flag_text") + 1
    assert "M_MS(Teff)=" in both["flag_detail"][0] and "supplied 11" in both["flag_detail"][0]
    for c in plain.colnames:                                       # nothing else changes
        np.testing.assert_array_equal(np.asarray(plain[c]), np.asarray(both[c]), err_msg=c)
    brief = hrstage.classify(t, add_columns="brief,flag_detail")
    assert "flag_detail" in brief.colnames and "flag_text" not in brief.colnames
    with pytest.raises(HrstageInputError, match="unknown column"):
        hrstage.classify(t, add_columns="all,flag_details")


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


def test_masked_optional_inputs_do_not_set_missing_input():
    # Sun-like dwarfs and a red giant (IAU 2015 B3: Teff_sun 5772 K, L = 1 Lsun; the 4700 K / 80 Lsun
    # giant is common practice) with [Fe/H] and the MK type masked on some rows: those rows are
    # classified, carry NO_METALLICITY (only where feh is masked) and never MISSING_INPUT, which
    # is kept for values the row's route needs.
    n = 24
    teff = np.where(np.arange(n) % 3 == 1, 4700.0, 5772.0)
    lum = np.where(np.arange(n) % 3 == 1, 80.0, 1.0)
    feh_mask = np.arange(n) % 4 == 0
    sp_mask = np.arange(n) % 5 == 0
    t = Table({"teff": teff, "lum": lum,
               "teff_err": MaskedColumn(np.full(n, 80.0), mask=np.arange(n) % 6 == 0),
               "feh": MaskedColumn(np.full(n, -0.2), mask=feh_mask),
               "sptype": MaskedColumn(np.where(teff > 5000, "G2V", "K3III"), mask=sp_mask)})
    out = hrstage.classify(t)
    flags = np.asarray(out["flags"], dtype=np.int64)
    assert not np.any(out["stage"] == "unclassified")
    assert not np.any(flags & F.MISSING_INPUT)
    assert np.all(((flags & F.NO_METALLICITY) != 0) == feh_mask)
    assert not any("required input" in str(s) for s in out["flag_text"])
    assert set(out["stage"][teff > 5000]) == {"main_sequence"}
    assert set(out["stage"][teff < 5000]) == {"giant"}
    # a missing route value still does: teff masked -> unclassified with MISSING_INPUT
    t["teff"] = MaskedColumn(teff, mask=np.arange(n) == 3)
    out = hrstage.classify(t)
    assert out["stage"][3] == "unclassified" and out["flags"][3] & F.MISSING_INPUT
    assert not np.any(np.asarray(out["flags"])[np.arange(n) != 3] & F.MISSING_INPUT)


def test_scalar_feh_uses_the_exact_map(tmp_path):
    # no feh column and a default [Fe/H] of -1.35 (between grid points): every row shares it, so
    # the classifier gets a scalar and the map at exactly -1.35 (not the nearest grid point)
    t = Table({"teff": [5772.0, 4700.0, 6200.0], "lum": [1.0, 80.0, 2.0]})
    out = hrstage.classify(t, feh=-1.35)
    np.testing.assert_allclose(np.asarray(out["feh_used"], dtype=float), -1.35)
    assert not np.any(np.asarray(out["flags"]) & F.NO_METALLICITY)
    src = tmp_path / "in.parquet"
    write_table(t, src)
    classify_file(src, tmp_path / "out.parquet", feh=-1.35, chunk_rows=2)
    back = read_table(tmp_path / "out.parquet")
    np.testing.assert_allclose(np.asarray(back["feh_used"], dtype=float), -1.35)
    # a feh column keeps per-row values (grid choice is the classifier's), the default fills gaps
    t["feh"] = MaskedColumn([0.1, -0.4, 0.0], mask=[False, False, True])
    out = hrstage.classify(t, feh=-1.35)
    assert not np.any(np.asarray(out["flags"]) & F.NO_METALLICITY)
    assert float(out["feh_used"][2]) != pytest.approx(0.0)


def _mixed_population(n, seed=11):
    """Invented stars over the whole diagram (dwarfs, giants, white dwarfs) with [Fe/H] and errors."""
    rng = np.random.default_rng(seed)
    teff = 10 ** rng.uniform(3.45, 4.6, n)
    logl = rng.uniform(-3.5, 5.0, n)
    feh = MaskedColumn(np.round(rng.uniform(-2.0, 0.4, n), 2), mask=rng.random(n) < 0.1)
    return Table({"star_id": np.arange(n), "teff": teff, "teff_err": 0.02 * teff, "lum": 10 ** logl,
                  "lum_err": 0.1 * 10 ** logl, "feh": feh})


@pytest.mark.parametrize("suffix, out_suffix", [(".parquet", ".parquet"), (".parquet", ".csv"), (".ecsv", ".csv"),
                                                (".fits", ".parquet")])
def test_workers_give_the_same_bytes(tmp_path, suffix, out_suffix):
    # 2 worker processes: same file, byte for byte, as one process (order, Monte Carlo streams per
    # chunk offset, metadata), over several chunks (CSV input reads blocks of >= 4 MiB, so a small
    # CSV is one chunk: the CSV writer is checked from ECSV input)
    src = tmp_path / f"in{suffix}"
    write_table(_mixed_population(2600), src)
    one, two = tmp_path / f"one{out_suffix}", tmp_path / f"two{out_suffix}"
    s1 = classify_file(src, one, chunk_rows=500, n_draws=8, workers=1)
    s2 = classify_file(src, two, chunk_rows=500, n_draws=8, workers=2)
    assert s1["workers"] == 1 and s2["workers"] == 2
    assert one.read_bytes() == two.read_bytes()
    assert {k: v for k, v in s1.items() if k not in ("output", "workers")} == \
           {k: v for k, v in s2.items() if k not in ("output", "workers")}
    assert s1["rows"] == 2600
    assert not list(tmp_path.glob(".*"))           # no temporary file left behind


@pytest.mark.parametrize("suffix, out_suffix", [(".parquet", ".parquet"), (".ecsv", ".csv")])
def test_compute_threads_give_the_same_bytes(tmp_path, suffix, out_suffix):
    # chunks classified in 1, 2 or 3 threads: same file, byte for byte (chunks are independent and
    # written in order; a chunk's Monte Carlo stream depends only on its first row's index)
    src = tmp_path / f"in{suffix}"
    write_table(_mixed_population(2600), src)
    outs = []
    for k in (1, 2, 3):
        out = tmp_path / f"t{k}{out_suffix}"
        summary = classify_file(src, out, chunk_rows=400, n_draws=8, threads=k)
        assert summary["rows"] == 2600
        outs.append(out.read_bytes())
    assert outs[0] == outs[1] == outs[2]
    with pytest.raises(HrstageInputError, match="threads must be"):
        classify_file(src, tmp_path / "x.parquet", threads=0)


def test_workers_without_the_map_cache_give_the_same_bytes(tmp_path, monkeypatch):
    # map cache off: the first chunk is classified in this process, so that the forked workers
    # inherit its maps; the file is still the same, byte for byte
    monkeypatch.setenv("HRSTAGE_MAP_CACHE", "0")
    src = tmp_path / "in.parquet"
    write_table(_mixed_population(1500), src)
    one, two = tmp_path / "one.parquet", tmp_path / "two.parquet"
    s1 = classify_file(src, one, chunk_rows=500, n_draws=8, workers=1)
    s2 = classify_file(src, two, chunk_rows=500, n_draws=8, workers=2)
    assert s1["workers"] == 1 and s2["workers"] == 2
    assert one.read_bytes() == two.read_bytes()


def test_workers_option_checked(tmp_path):
    from hrstage.engine import resolve_workers

    assert resolve_workers("auto") >= 1 and resolve_workers(3) == 3 and resolve_workers("2") == 2
    for bad in (0, -1, "many", 1.5):
        with pytest.raises(HrstageInputError, match="workers"):
            resolve_workers(bad)
    # "auto": the usable cores less those busy with other work, at least one
    from hrstage.engine.workers import idle_cores

    cores = idle_cores(busy=0)
    assert cores >= 1 and idle_cores(busy=cores + 3) == 1 and idle_cores(busy=1) == max(1, cores - 1)
    assert idle_cores(busy=0.4) == cores
    # a file of a single chunk never starts a pool
    src = tmp_path / "in.parquet"
    write_table(_mixed_population(50), src)
    assert classify_file(src, tmp_path / "o.parquet", workers=2)["workers"] == 1


@pytest.mark.parametrize("workers", [1, 2])
def test_error_in_a_later_chunk_names_the_rows_and_leaves_nothing(tmp_path, monkeypatch, workers):
    import tempfile

    import pyarrow as pa
    import pyarrow.parquet as pq

    spill_base = tmp_path / "tmp"
    spill_base.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(spill_base))
    n = 3000
    teff = np.array([str(5000 + i % 100) for i in range(n)], dtype=object)
    teff[2000:] = "hot"                     # a column of words from row 2000 on: the wrong column
    pq.write_table(pa.table({"teff": teff, "lum": np.ones(n)}), tmp_path / "in.parquet")
    out = tmp_path / "out.parquet"
    with pytest.raises(HrstageInputError, match=r"teff.*data rows 2000-2499"):
        classify_file(tmp_path / "in.parquet", out, chunk_rows=500, workers=workers)
    assert not out.exists() and not list(tmp_path.glob(".*"))
    assert not list(spill_base.iterdir())     # the workers' result folder is removed


def test_add_columns_brief_and_named_lists():
    # the brief set and a named list are subsets of the full output with the same values
    t = _mixed_population(700)
    full = hrstage.classify(t, n_draws=8)
    brief = hrstage.classify(t, n_draws=8, add_columns="brief")
    ours = [c for c in brief.colnames if c not in t.colnames]
    assert ours == ["stage", "stage_prob", "mass_est", "teff_used", "logl_used", "flags"]
    for c in ours:
        np.testing.assert_array_equal(np.asarray(brief[c]), np.asarray(full[c]))
    named = hrstage.classify(t, add_columns=["mass_method", "flag_text"])
    # stage and flags always come; order follows the full output
    assert [c for c in named.colnames if c not in t.colnames] == ["stage", "mass_method", "flags", "flag_text"]
    np.testing.assert_array_equal(np.asarray(named["flag_text"]), np.asarray(hrstage.classify(t)["flag_text"]))
    assert [c for c in hrstage.classify(t, add_columns="all").colnames] == full.colnames
    with pytest.raises(HrstageInputError, match="unknown column"):
        hrstage.classify(t, add_columns="stage,no_such_column")


def test_add_columns_in_a_streamed_file(tmp_path):
    src = tmp_path / "in.parquet"
    write_table(_mixed_population(1200), src)
    classify_file(src, tmp_path / "full.parquet", chunk_rows=500, n_draws=8)
    classify_file(src, tmp_path / "brief.parquet", chunk_rows=500, n_draws=8, add_columns="brief", workers=2)
    full = read_table(tmp_path / "full.parquet")
    brief = read_table(tmp_path / "brief.parquet")
    assert "flag_text" not in brief.colnames and "prob_giant" not in brief.colnames
    for c in ("stage", "stage_prob", "mass_est", "teff_used", "logl_used", "flags"):
        np.testing.assert_array_equal(np.asarray(brief[c]), np.asarray(full[c]))
