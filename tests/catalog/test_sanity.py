"""Unit conversions, fill values, masks and whole-column mistakes (layer 6 sanity checks)."""

from __future__ import annotations

import numpy as np
import pytest
from astropy import constants as const
from astropy import units as u
from astropy.table import MaskedColumn, Table

from hrstage.catalog import MISSING, NONPHYSICAL, OK, SENTINEL, detect_profile, extract_roles
from hrstage.catalog.sanity import NOT_A_NUMBER, column_values
from hrstage.errors import HrstageInputError


def test_luminosity_in_watts_is_converted():
    # IAU 2015 Resolution B3: nominal L_sun = 3.828e26 W (astropy.constants.iau2015)
    col = MaskedColumn([const.L_sun.value, 2 * 3.828e26], name="L", unit="W")
    vals, st = column_values(col, "lum")
    np.testing.assert_allclose(vals, [1.0, 2.0], rtol=1e-12)
    assert list(st) == [OK, OK]


def test_parallax_in_arcsec_and_radius_in_km():
    vals, _ = column_values(MaskedColumn([0.1, 0.002], name="p", unit="arcsec"), "parallax")
    np.testing.assert_allclose(vals, [100.0, 2.0])                 # 1 arcsec = 1000 mas (definition)
    # IAU 2015 B3 nominal solar radius 695 700 km
    vals, _ = column_values(MaskedColumn([695700.0], name="r", unit="km"), "radius")
    np.testing.assert_allclose(vals, [1.0])


def test_incompatible_unit_is_an_error():
    with pytest.raises(HrstageInputError, match="unit 'mag', expected K"):
        column_values(MaskedColumn([5000.0], name="T", unit="mag"), "teff")


def test_fill_values_and_masks():
    # 99.99 / -9999 / 9999 as "no value": common practice in survey catalogues
    g = MaskedColumn([12.3, 99.99, -9999.0, 55.0, 14.0, np.nan], mask=[0, 0, 0, 0, 1, 0], name="G")
    vals, st = column_values(g, "g")
    assert list(st) == [OK, SENTINEL, SENTINEL, SENTINEL, MISSING, MISSING]
    assert np.isnan(vals[1:]).all() and vals[0] == 12.3
    t = column_values(MaskedColumn([5000.0, -9999.0, -10.0, np.inf, 9999.0], name="T"), "teff")
    # 9999 K is a real temperature (an A star): only negative fill values count for linear Teff;
    # negative and infinite values are non-physical
    assert list(t[1]) == [OK, SENTINEL, NONPHYSICAL, NONPHYSICAL, OK]
    # log g 99.99 and [Fe/H] -9999 are fill values; parallax 999 mas exceeds any star's
    # (Proxima Centauri 768 mas, Gaia DR3 — from memory)
    assert column_values(MaskedColumn([4.4, 99.99], name="g"), "logg")[1][1] == SENTINEL
    assert column_values(MaskedColumn([0.1, -9999.0], name="f"), "feh")[1][1] == SENTINEL
    assert column_values(MaskedColumn([5.0, 2500.0], name="p"), "parallax")[1][1] == SENTINEL


def test_text_in_numeric_column():
    vals, st = column_values(MaskedColumn(["5000", " ", "nan", "6000.5"], name="T"), "teff")
    assert list(st) == [OK, MISSING, MISSING, OK] and vals[3] == 6000.5
    # a few words among numbers: bad rows, with the word kept for the row's reason
    words = {}
    vals, st = column_values(MaskedColumn(["5000", "6000", "hot", "", "7000"], name="T"), "teff", words)
    assert list(st) == [OK, OK, NOT_A_NUMBER, MISSING, OK] and np.isnan(vals[2])
    assert list(words["teff"]) == ["", "", "hot", "", ""]
    # mostly words (at least half of the non-empty entries): the wrong column, an error
    with pytest.raises(HrstageInputError, match=r"column T \(role teff\) is text, not numbers: 2 of its 3 .*"
                       r"'hot' at row 1"):
        column_values(MaskedColumn(["5000", "hot", "warm", ""], name="T"), "teff")


def test_log_teff_given_as_teff():
    with pytest.raises(HrstageInputError, match="looks like log10 Teff.*logt='T'") as info:
        column_values(MaskedColumn([3.76, 3.6, 4.1], name="T"), "teff")
    assert "--col logt=T" in info.value.cli_message()      # the same advice in command-line words
    with pytest.raises(HrstageInputError, match="looks like Teff in K"):
        column_values(MaskedColumn([5772.0, 4000.0], name="lt"), "logt")


def test_log_l_given_as_l():
    with pytest.raises(HrstageInputError, match="looks like log10 L; map it to role logl"):
        column_values(MaskedColumn([-0.5, 0.3, -1.2, 2.0], name="L"), "lum")
    with pytest.raises(HrstageInputError, match="looks like L in Lsun"):
        column_values(MaskedColumn([1e4, 3e5, 20.0, 50.0], name="LL"), "logl")
    # a single negative luminosity among many is a bad row, not a log column
    vals, st = column_values(MaskedColumn([1.0] * 20 + [-1.0], name="L"), "lum")
    assert st[-1] == NONPHYSICAL and st[0] == OK


def test_extract_roles_from_logt_and_bp_rp():
    t = Table({"logt": [3.7612, 4.0], "logl": [0.0, 1.0], "phot_bp_mean_mag": [10.5, 9.0],
               "phot_rp_mean_mag": [9.7, 9.1]})
    m = detect_profile(t, explicit={"logt": "logt", "logl": "logl"})
    vals, st = extract_roles(t, m)
    np.testing.assert_allclose(vals["teff"], 10 ** np.array([3.7612, 4.0]))
    t2 = Table({"g": [10.0], "phot_bp_mean_mag": [10.5], "phot_rp_mean_mag": [9.7], "parallax": [2.0]})
    v2, _ = extract_roles(t2, detect_profile(t2))
    np.testing.assert_allclose(v2["bp_rp"], [0.8])


def test_log_teff_unit_quantity():
    # a dex(K) unit on a 'teff' column is read as log Teff (profiles rule 2)
    t = Table({"teff": [3.7612], "lum": [1.0]})
    t["teff"].unit = u.dex(u.K)
    m = detect_profile(t)
    assert m.roles["logt"] == "teff"
