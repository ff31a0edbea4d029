"""Round trips and malformed files for every catalogue format (layer 6).

Check values: the formats' own specifications (FITS 4.0 standard: 2880-byte blocks, TUNITn; IVOA
VOTable 1.4 FIELD ucd; astropy ECSV), and IAU 2015 Resolution B3 for the unit conversion of L.
"""

from __future__ import annotations

import numpy as np
import pytest
from astropy import units as u
from astropy.table import MaskedColumn, Table

from hrstage.catalog import FORMATS, describe_columns, format_of, read_table, write_table
from hrstage.catalog.atomic import TEMP_MARK
from hrstage.columns import COLUMNS
from hrstage.errors import HrstageInputError

SUFFIX = {"fits": ".fits", "votable": ".vot", "ecsv": ".ecsv", "csv": ".csv", "parquet": ".parquet"}


def sample_table(n=7):
    rng = np.random.default_rng(3)
    t = Table()
    t["name"] = [f"TGT-{i:06d}" for i in range(n)]
    t["teff"] = np.round(rng.uniform(3500, 9000, n), 1)
    t["teff"][2] = np.nan
    t["teff"].unit = "K"
    t["lum"] = rng.lognormal(0, 1, n) * 1.0000001          # awkward decimals: exact text needed
    t["lum"].unit = "solLum"
    t["count"] = np.arange(n, dtype=np.int32) * 3
    t["good"] = np.arange(n) % 2 == 0
    t["note"] = ["plain", "with, comma", 'with "quote"', "", "x", "y", "z"][:n]
    return t


def assert_same_values(a, b, fmt):
    assert a.colnames == b.colnames[: len(a.colnames)]
    assert len(a) == len(b)
    for name in a.colnames:
        x, y = np.asarray(a[name]), np.asarray(b[name])
        if x.dtype.kind == "f":
            np.testing.assert_array_equal(np.ma.filled(b[name].astype(float), np.nan), x, err_msg=name)
        else:
            assert list(x) == list(y), name
        # text may come back as fixed-width str ("U") or as Python strings ("O"): both are text
        kind_in, kind_out = (("U" if a.dtype.kind == "O" else a.dtype.kind) for a in (x, y))
        assert kind_in == kind_out, (fmt, name, x.dtype, y.dtype)
        if fmt in ("fits", "votable", "ecsv", "parquet"):
            # widths kept too (CSV keeps only the kind: it has no type widths)
            assert x.dtype.itemsize == y.dtype.itemsize or kind_in == "U", (fmt, name)


@pytest.mark.parametrize("fmt", FORMATS)
def test_round_trip_keeps_rows_order_values_dtypes(tmp_path, fmt):
    t = sample_table()
    path = tmp_path / f"cat{SUFFIX[fmt]}"
    write_table(t, path)
    back = read_table(path)
    assert_same_values(t, back, fmt)
    # rewriting what we read gives the same again (second generation)
    path2 = tmp_path / f"cat2{SUFFIX[fmt]}"
    write_table(back, path2)
    assert_same_values(t, read_table(path2), fmt)


@pytest.mark.parametrize("fmt", [f for f in FORMATS if f != "csv"])
def test_our_columns_carry_unit_description_ucd(tmp_path, fmt):
    t = Table({"teff": [5000.0, 6000.0]})
    t["stage"] = ["giant", "main_sequence"]
    t["logl_used"] = [1.5, 0.1]
    t["flags"] = np.array([0, 32], dtype=np.int64)
    describe_columns(t)
    path = tmp_path / f"tagged{SUFFIX[fmt]}"
    write_table(t, path)
    back = read_table(path)
    assert back["logl_used"].unit == u.Unit(COLUMNS["logl_used"].unit)    # dex(solLum), hrstage.columns
    assert back["logl_used"].description.startswith(COLUMNS["logl_used"].description[:60])
    if fmt in ("votable", "ecsv", "parquet"):
        assert back["stage"].meta.get("ucd") == "src.class"                    # hrstage.columns
    if fmt == "fits":
        from astropy.io import fits

        hdr = fits.getheader(path, 1)
        # FITS 4.0 standard §4.3 lists the units TUNITn may hold; dex is not among them (astropy's
        # FITS unit grammar refuses it), so the log column has no TUNIT and we keep the unit in HRSUn
        assert "TUNIT3" not in hdr and hdr["HRSU3"] == "dex(solLum)"
        assert hdr["TCOMM2"].startswith("Evolutionary stage")
        assert hdr["TCOMM3"].startswith("log10 luminosity")


def test_csv_keeps_exact_doubles(tmp_path):
    # shortest round-trip text of an IEEE double (Steele & White / repr rule, common practice)
    vals = np.array([0.1, 1 / 3, 5000.0, 1e-300, 6.02214076e23, -0.0, 123456789.123456789])
    t = Table({"x": vals})
    write_table(t, tmp_path / "x.csv")
    back = read_table(tmp_path / "x.csv")
    assert back["x"].dtype.kind == "f"
    np.testing.assert_array_equal(np.asarray(back["x"]), vals)


def test_masked_entries_survive(tmp_path):
    t = Table({"a": MaskedColumn([1.0, 2.0, 3.0], mask=[False, True, False]),
               "b": MaskedColumn([1, 2, 3], mask=[True, False, False])})
    for fmt in ("votable", "ecsv", "csv", "parquet"):
        p = tmp_path / f"m{SUFFIX[fmt]}"
        write_table(t, p)
        back = read_table(p)
        assert list(np.ma.getmaskarray(back["a"])) == [False, True, False], fmt
        assert list(np.ma.getmaskarray(back["b"])) == [True, False, False], fmt


def test_format_from_suffix_and_errors(tmp_path):
    assert format_of("a.FITS") == "fits"
    assert format_of("a.parq") == "parquet"
    assert format_of("x", "ascii.ecsv") == "ecsv"
    with pytest.raises(HrstageInputError, match="suffix"):
        format_of("catalogue.dat")
    with pytest.raises(HrstageInputError, match="compressed"):
        format_of("catalogue.fits.gz")


def test_refuses_overwrite_and_input_as_output(tmp_path):
    t = sample_table()
    p = tmp_path / "c.ecsv"
    write_table(t, p)
    before = p.read_bytes()
    with pytest.raises(HrstageInputError, match="already exists"):
        write_table(t[:2], p)
    assert p.read_bytes() == before
    write_table(t[:2], p, overwrite=True)
    assert len(read_table(p)) == 2
    with pytest.raises(HrstageInputError, match="is the input"):
        write_table(t, p, overwrite=True, inputs=[p])


def test_failed_write_leaves_nothing(tmp_path):
    t = Table({"cube": np.zeros((3, 2, 2))})        # 3-D cells cannot go to CSV
    with pytest.raises(HrstageInputError):
        write_table(t, tmp_path / "bad.parquet")
    assert list(tmp_path.iterdir()) == []


def test_no_temporary_files_left(tmp_path):
    write_table(sample_table(), tmp_path / "ok.parquet")
    assert [p.name for p in tmp_path.iterdir()] == ["ok.parquet"]
    assert not any(TEMP_MARK in p.name for p in tmp_path.iterdir())


# ------------------------------------------------------------------------ malformed input
def test_empty_file(tmp_path):
    for suffix in (".csv", ".fits", ".parquet", ".ecsv", ".vot"):
        p = tmp_path / f"empty{suffix}"
        p.write_bytes(b"")
        with pytest.raises(HrstageInputError, match="empty"):
            read_table(p)


def test_missing_file(tmp_path):
    with pytest.raises(HrstageInputError, match="does not exist"):
        read_table(tmp_path / "nope.fits")


def test_truncated_fits(tmp_path):
    t = Table({"teff": np.linspace(3000, 9000, 5000), "lum": np.ones(5000)})
    p = tmp_path / "full.fits"
    write_table(t, p)
    raw = p.read_bytes()
    cut = tmp_path / "cut.fits"
    cut.write_bytes(raw[: 2880 * 2 + 5000])     # header blocks + a bit of the data (FITS 4.0 §3.1)
    with pytest.raises(HrstageInputError, match="cut.fits") as info:
        read_table(cut)
    assert "\n" not in str(info.value)
    half_header = tmp_path / "head.fits"
    half_header.write_bytes(raw[:1000])
    with pytest.raises(HrstageInputError):
        read_table(half_header)


def test_csv_with_bad_rows(tmp_path):
    p = tmp_path / "bad.csv"
    p.write_text("teff,lum\n5000,1.0\n6000\n7000,2.0,9\n")
    with pytest.raises(HrstageInputError, match="bad.csv") as info:
        read_table(p)
    assert "\n" not in str(info.value)


def test_not_a_parquet_file(tmp_path):
    p = tmp_path / "fake.parquet"
    p.write_text("teff,lum\n1,2\n")
    with pytest.raises(HrstageInputError, match="Parquet"):
        read_table(p)


def test_fits_restores_units_astropy_cannot_write(tmp_path):
    t = Table({"logl": [0.0, 1.0]})
    t["logl"].unit = u.dex(u.solLum)
    write_table(t, tmp_path / "l.fits")
    assert read_table(tmp_path / "l.fits")["logl"].unit == u.dex(u.solLum)


@pytest.mark.parametrize("fmt", FORMATS)
def test_output_mode_follows_umask_not_tempfile(tmp_path, fmt):
    """A new output gets 0o666 minus the umask, as open(path, 'w') would (POSIX open(2), common
    practice), not the 0o600 of a temporary file; a replaced output keeps its own mode."""
    import os

    from hrstage.catalog import ChunkWriter

    old = os.umask(0o027)
    try:
        path = tmp_path / f"new{SUFFIX[fmt]}"
        write_table(sample_table(), path)
        assert path.stat().st_mode & 0o777 == 0o640
        streamed = tmp_path / f"streamed{SUFFIX[fmt]}"
        with ChunkWriter(streamed) as w:
            w.write(sample_table())
        assert streamed.stat().st_mode & 0o777 == 0o640
        os.chmod(path, 0o604)
        write_table(sample_table(), path, overwrite=True)
        assert path.stat().st_mode & 0o777 == 0o604
    finally:
        os.umask(old)


@pytest.mark.parametrize("chunk_rows", [None, 7])
@pytest.mark.parametrize("fmt", [f for f in FORMATS if f != "csv"])
def test_written_files_read_back_in_astropy_without_warnings(tmp_path, fmt, chunk_rows):
    """Issue 16 item 3: FITS wrote TUNIT 'dex(solLum)' (astropy: "not supported by the FITS
    standard") and Parquet lacked the ``table::len::`` widths astropy's reader wants (one warning
    per text column). Whole-table and streamed (chunked) outputs of classify_file."""
    import warnings

    from hrstage.engine import classify_file

    rng = np.random.default_rng(5)
    n = 30
    t = Table({"star": [f"S-{i}" for i in range(n)], "teff": rng.uniform(3500, 9000, n),
               "lum": 10 ** rng.uniform(-1, 2.5, n), "sptype": ["G2V", "K0III", "", "A0V", "M2III", "F5IV"] * 5})
    src = tmp_path / "in.ecsv"
    write_table(t, src)
    out = tmp_path / f"out{SUFFIX[fmt]}"
    classify_file(src, out, chunk_rows=chunk_rows, n_draws=0)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        plain = Table.read(out)
    assert len(plain) == n and "flag_text" in plain.colnames
    ours = read_table(out)              # hrstage's reader keeps the log units
    assert ours["logl_used"].unit == u.Unit("dex(solLum)") and ours["logt_err"].unit == u.dex
    assert ours["mass_est"].unit == u.solMass
