"""Check values of the colour-Teff relations and of Riello et al. 2021 G-V."""

import numpy as np
import pytest

from hrstage.models import (ballesteros2012, casagrande2010, casagrande2021, colour_teff, flower_teff,
                            mucciarelli2021, riello2021)


@pytest.mark.parametrize("bv, branch, expected", [
    (0.65, "dwarf_giant", 5718), (0.65, "supergiant", 5762), (0.0, "dwarf_giant", 9531),
    (1.0, "dwarf_giant", 4844), (1.5, "dwarf_giant", 3983),
])
def test_flower_teff_check_values(bv, branch, expected):
    # formulae.md §4.1 check values [C] (Torres 2010 Table 2 coefficients)
    assert flower_teff.teff(bv, branch=branch) == pytest.approx(expected, abs=0.6)


def test_flower_teff_range():
    assert np.all(np.isnan(flower_teff.teff([-0.4, 1.95, np.nan])))
    with pytest.raises(ValueError):
        flower_teff.teff(0.5, branch="dwarf")


@pytest.mark.parametrize("colour, which, feh, expected", [
    (0.65, "B-V", 0.0, 5750), (0.65, "B-V", -1.0, 5508), (1.56, "V-Ks", 0.0, 5755),
    (1.20, "V-J", 0.0, 5738), (0.72, "V-Ic", 0.0, 5672),
])
def test_casagrande2010_check_values(colour, which, feh, expected):
    # formulae.md §5.2 check values [C] (Casagrande et al. 2010 Table 4)
    assert casagrande2010.teff(colour, feh, which=which) == pytest.approx(expected, abs=0.6)


def test_casagrande2010_ranges_and_sigmas():
    # colour range 0.18-1.29 and [Fe/H] -5..0.4 for B-V, sigma 73 K (Casagrande et al. 2010 Table 4)
    assert np.isnan(casagrande2010.teff(0.17)) and np.isnan(casagrande2010.teff(1.30))
    assert np.isnan(casagrande2010.teff(0.6, 0.5))
    assert casagrande2010.RELATIONS["B-V"].sigma == 73.0
    assert casagrande2010.RELATIONS["V-Ks"].sigma == 25.0
    with pytest.raises(ValueError):
        casagrande2010.teff(0.6, which="b-y")   # left out on purpose (needs the paper's correction)


@pytest.mark.parametrize("x, logg, release, expected", [
    (0.82, 4.44, "dr3", 5762), (0.82, 4.44, "dr2", 5785), (1.20, 2.5, "dr3", 4716),
])
def test_casagrande2021_check_values(x, logg, release, expected):
    # formulae.md §5.4 check values [C] (Casagrande et al. 2021, author's coefficients)
    assert casagrande2021.teff(x, logg, 0.0, release=release) == pytest.approx(expected, abs=0.6)


def test_casagrande2021_validity():
    # dwarfs (log g > 3.2) 0.20-2.00, giants 0.20-2.55, 0 <= log g <= 5, [Fe/H] <= 0.6 (formulae.md §5.4)
    t = casagrande2021.teff([0.19, 2.1, 2.1, 2.56, 1.0, 1.0, 1.0], [4.5, 4.5, 3.0, 3.0, 5.1, 4.5, -0.1],
                            [0, 0, 0, 0, 0, 0.7, 0])
    assert np.isnan(t[0]) and np.isnan(t[1]) and np.isfinite(t[2]) and np.isnan(t[3])
    assert np.isnan(t[4]) and np.isnan(t[5]) and np.isnan(t[6])
    # [Fe/H] below -4 is set to -4 (author's code)
    assert casagrande2021.teff(1.0, 4.5, -5.0) == casagrande2021.teff(1.0, 4.5, -4.0)
    with pytest.raises(ValueError):
        casagrande2021.teff(1.0, 4.5, release="dr1")


@pytest.mark.parametrize("x, kind, expected", [
    (0.50, "dwarf", 6823), (0.82, "dwarf", 5684), (1.20, "dwarf", 4786), (1.50, "dwarf", 4281),
    (1.20, "giant", 4774), (1.50, "giant", 4303),
])
def test_mucciarelli2021_check_values(x, kind, expected):
    # formulae.md §5.3 check values [C]
    assert mucciarelli2021.teff(x, 0.0, kind=kind) == pytest.approx(expected, abs=0.6)


def test_mucciarelli2021_ranges():
    assert np.isnan(mucciarelli2021.teff(0.38, kind="dwarf")) and np.isnan(mucciarelli2021.teff(1.51, kind="dwarf"))
    assert np.isfinite(mucciarelli2021.teff(1.8, kind="giant")) and np.isnan(mucciarelli2021.teff(1.82, kind="giant"))
    assert mucciarelli2021.SIGMA == {"dwarf": 61.0, "giant": 83.0}   # formulae.md §5.3 table


@pytest.mark.parametrize("bv, expected", [(0.65, 5778), (0.0, 10125), (1.0, 4743), (1.5, 3794), (-0.2, 13585)])
def test_ballesteros_check_values_and_inverse(bv, expected):
    # formulae.md §5.1 check values [C]; inverse round trip exact to 1e-15 [C]
    t = ballesteros2012.teff(bv)
    assert t == pytest.approx(expected, abs=0.6)
    assert ballesteros2012.b_v(t) == pytest.approx(bv, abs=1e-12)


def test_riello_g_minus_v():
    # Riello et al. 2021 / Gaia EDR3 docs §5.5.1: G-V = -0.02704 at BP-RP = 0, sigma 0.03017,
    # valid -0.5 < BP-RP < 5.0
    assert riello2021.g_minus_v(0.0) == pytest.approx(-0.02704)
    c = 1.5
    assert riello2021.g_minus_v(c) == pytest.approx(-0.02704 + 0.01424 * c - 0.2156 * c**2 + 0.01426 * c**3)
    assert np.all(np.isnan(riello2021.g_minus_v([-0.5, 5.0])))


def test_index_module():
    assert set(colour_teff.GAIA_RELATIONS) <= set(colour_teff.MODULES)
    assert "Casagrande" in colour_teff.describe("casagrande2021")
    with pytest.raises(ValueError):
        colour_teff.describe("nope")
