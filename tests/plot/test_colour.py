"""Blackbody display colours and the CIE 1931 colour-matching-function fit."""

import numpy as np
import pytest

from hrstage.errors import HrstageInputError
from hrstage.plot import blackbody_colour, cie1931_cmf
from hrstage.plot.colour import _exact, blackbody_xyz

# CIE 1931 2-degree standard observer, tabulated x-bar, y-bar, z-bar (CIE 15:2004 Table T.4);
# the same numbers appear in many independent public transcriptions of the table.
CIE_1931 = [
    (450, 0.3362, 0.0380, 1.7721),
    (500, 0.0049, 0.3230, 0.2720),
    (555, 0.5121, 1.0000, 0.0057),
    (600, 1.0622, 0.6310, 0.0008),
    (650, 0.2835, 0.1070, 0.0000),
]


@pytest.mark.parametrize("lam, xb, yb, zb", CIE_1931)
def test_cmf_fit_reproduces_cie_table(lam, xb, yb, zb):
    # Wyman, Sloan & Shirley (2013) state that their multi-lobe fit errs less than the spread of
    # the observers behind the standard; 0.02 (about 1 % of the peak of z-bar) is our tolerance.
    got = cie1931_cmf(lam)
    np.testing.assert_allclose(got, [xb, yb, zb], atol=0.02)


def test_planckian_chromaticity_of_illuminant_a():
    # CIE standard illuminant A is a 2856 K Planckian radiator: x = 0.44757, y = 0.40745
    # (CIE 15:2004, Table T.3).
    xyz = blackbody_xyz(2856.0)[0]
    x, y = xyz[0] / xyz.sum(), xyz[1] / xyz.sum()
    assert x == pytest.approx(0.44757, abs=0.003)
    assert y == pytest.approx(0.40745, abs=0.003)


def test_sun_is_warm_white():
    # common practice: a 5772 K blackbody shown in sRGB (D65 white) is a slightly warm white
    r, g, b = blackbody_colour(5772.0)[0]
    assert r == pytest.approx(1.0)
    assert r >= g >= b
    assert b > 0.8 and r - b < 0.2


def test_cool_star_is_orange_red():
    # common practice: 3000 K looks orange-red
    r, g, b = blackbody_colour(3000.0)[0]
    assert r == pytest.approx(1.0)
    assert g < 0.85 and b < 0.6 and g - b > 0.15


@pytest.mark.parametrize("teff", [10000.0, 20000.0, 40000.0])
def test_hot_stars_are_bluish(teff):
    # common practice: 10 000 K and hotter look blue-white
    r, g, b = blackbody_colour(teff)[0]
    assert b == pytest.approx(1.0)
    assert r < 0.9 and r < g < b


def test_colour_is_monotonic_in_temperature():
    t = np.geomspace(2000, 50000, 200)
    rgb = blackbody_colour(t)
    ratio = rgb[:, 2] / rgb[:, 0]
    assert np.all(np.diff(ratio) > 0)  # bluer as the star gets hotter (Wien's law)


def test_long_inputs_use_the_grid_within_1e3():
    t = np.geomspace(800, 200000, 5000)
    fast = blackbody_colour(t)
    assert fast.shape == (5000, 3)
    np.testing.assert_allclose(fast, _exact(t), atol=1e-3)


def test_nan_gives_grey_and_bad_input_raises():
    rgb = blackbody_colour([np.nan, 5000.0])
    np.testing.assert_allclose(rgb[0], 0.5)
    with pytest.raises(HrstageInputError):
        blackbody_colour([-10.0])


def test_quantity_input():
    from astropy import units as u

    np.testing.assert_allclose(blackbody_colour(5.772 * u.kK), blackbody_colour(5772.0))
