"""Published distances (median with 16th/84th percentiles) instead of 1/parallax on the photometric paths."""

import numpy as np
import pytest
from astropy import units as u
from astropy.table import Table

import hrstage
from hrstage import flags as F
from hrstage.derive import from_gaia, from_johnson
from hrstage.errors import HrstageInputError


def test_distance_equals_parallax_route():
    # the same star at 1000/plx pc: identical L (distance modulus 5 log10 d - 5, common practice)
    a = from_gaia(10.0, 0.9, 8.0)
    b = from_gaia(10.0, 0.9, np.nan, distance=125.0)
    assert b.logl[0] == pytest.approx(a.logl[0], abs=1e-12)
    assert b.teff[0] == pytest.approx(a.teff[0])
    assert "published median" in b.source[0] and "published" not in a.source[0]
    c = from_gaia(10.0, 0.9, 8.0, distance=0.125 * u.kpc)     # a Quantity in kpc
    assert c.logl[0] == pytest.approx(a.logl[0], abs=1e-12)


def test_asymmetric_interval():
    # 100 pc with 16-84 % = 90-120 pc: log L moves by 2 log10(100/90) = 0.0915 down and
    # 2 log10(120/100) = 0.158 up (the source of the asymmetric errors); logl_err uses their mean
    r = from_gaia(10.0, 0.9, np.nan, distance=100.0, distance_lo=90.0, distance_hi=120.0)
    lo, hi = r.extra["logl_err_lo"][0], r.extra["logl_err_hi"][0]
    assert lo == pytest.approx(2 * np.log10(100 / 90), rel=0.05)
    assert hi == pytest.approx(2 * np.log10(120 / 100), rel=0.05)
    assert lo < r.logl_err[0] < hi
    assert r.logl_err[0] == pytest.approx(np.log10(120 / 90), rel=0.05)


def test_distance_where_parallax_is_negative_or_missing():
    r = from_gaia([10.0, 10.0, 10.0], 0.9, [-0.5, np.nan, 2.0], distance=[800.0, 900.0, np.nan],
                  distance_lo=[600.0, 700.0, np.nan], distance_hi=[1100.0, 1200.0, np.nan], parallax_err=0.5)
    assert np.all(np.isfinite(r.logl))
    assert not r.flags[0] & F.NONPOSITIVE_PARALLAX and not r.flags[1] & F.MISSING_INPUT
    assert r.flags[2] & F.LOW_PARALLAX_SNR           # row 3 uses its parallax: 2.0 +- 0.5 mas, SNR 4 < 5
    assert "published" in r.source[0] and "published" not in r.source[2]
    j = from_johnson([8.0, 8.0], 0.6, [np.nan, 10.0], distance=[100.0, np.nan])
    assert np.allclose(j.logl[0], j.logl[1])


def test_bad_interval_and_lonely_bounds():
    r = from_gaia(10.0, 0.9, np.nan, distance=100.0, distance_lo=110.0, distance_hi=120.0)
    assert r.flags[0] & F.BAD_INPUT and np.isfinite(r.logl[0])
    with pytest.raises(HrstageInputError, match="without distance"):
        from_gaia(10.0, 0.9, 5.0, distance_lo=90.0)


def test_engine_reads_distance_columns():
    # invented rows with VizieR-style names (Bailer-Jones et al. 2021): b_/B_ bounds told apart by case
    t = Table({"Gmag": [10.0, 11.0], "BP-RP": [0.9, 1.2], "Plx": [8.0, -0.3], "rgeo": [125.0, 2000.0],
               "b_rgeo": [120.0, 1500.0], "B_rgeo": [130.0, 2600.0]})
    out = hrstage.classify(t)
    assert np.all(out["stage"] != "unclassified")
    assert all("published median" in s for s in out["hr_source"])
    assert np.isclose(out["logl_used"][0], from_gaia(10.0, 0.9, 8.0).logl[0], atol=1e-6)
