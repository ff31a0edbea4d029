"""Stefan-Boltzmann, log g and bolometric-magnitude helpers against astropy's IAU 2015 constants."""

import numpy as np
import pytest
from astropy import constants as const
from astropy import units as u
from astropy.constants import iau2015

from hrstage.models import stellar


def test_iau2015_b3_nominal_values_in_astropy():
    # IAU 2015 Resolution B3 (Prsa et al. 2016; formulae.md §4.3 [V-doc]): nominal L, R, (GM)
    assert iau2015.L_sun.to_value(u.W) == 3.828e26
    assert iau2015.R_sun.to_value(u.m) == 6.957e8
    assert iau2015.GM_sun.to_value(u.m**3 / u.s**2) == pytest.approx(1.3271244e20, rel=1e-12)


def test_teff_sun_consistent_with_nominal_constants():
    # IAU 2015 B3: Teff_sun = 5772 K; from L, R, sigma_SB it is 5772.003 K (formulae.md §0)
    derived = (iau2015.L_sun / (4 * np.pi * iau2015.R_sun**2 * const.sigma_sb)) ** 0.25
    assert abs(derived.to_value(u.K) - stellar.TEFF_SUN) < 1.0
    assert stellar.TEFF_SUN == 5772.0


def test_mbol_sun_from_b2_zero_point():
    # IAU 2015 Resolution B2: M_bol = -2.5 log10(L / 3.0128e28 W); the Sun gives 4.7399959
    mbol = -2.5 * np.log10(iau2015.L_sun.to_value(u.W) / 3.0128e28)
    assert mbol == pytest.approx(4.7399959, abs=5e-8)
    assert stellar.MBOL_SUN == 4.74
    assert stellar.mbol_from_logl(0.0) == 4.74
    assert stellar.logl_from_mbol(stellar.mbol_from_logl(2.5)) == pytest.approx(2.5)
    assert stellar.mbol_from_logl(2.0) == pytest.approx(-0.26)


def test_logg_sun():
    # Common practice: log g_sun = 4.438 (cgs); here from astropy's nominal GM_sun and R_sun
    g = (iau2015.GM_sun / iau2015.R_sun**2).to_value(u.cm / u.s**2)
    assert stellar.LOGG_SUN == pytest.approx(np.log10(g), rel=1e-14)
    assert stellar.LOGG_SUN == pytest.approx(4.438, abs=5e-4)


def test_stefan_boltzmann_round_trips():
    r = np.array([0.01, 1.0, 10.0, 500.0])
    t = np.array([20000.0, 5772.0, 4500.0, 3500.0])
    logl = stellar.logl_from_rt(r, t)
    np.testing.assert_allclose(stellar.radius_from_lt(10**logl, t), r, rtol=1e-12)
    np.testing.assert_allclose(stellar.teff_from_lr(10**logl, r), t, rtol=1e-12)
    assert stellar.logl_from_rt(1.0, 5772.0) == 0.0
    # independent check with astropy: L = 4 pi R^2 sigma T^4 for a 10 Rsun, 4500 K giant
    lum = (4 * np.pi * (10 * iau2015.R_sun) ** 2 * const.sigma_sb * (4500 * u.K) ** 4 / iau2015.L_sun).decompose()
    assert stellar.logl_from_rt(10.0, 4500.0) == pytest.approx(np.log10(lum.value), abs=2e-6)


def test_gravity_relations():
    assert stellar.logg_from_mr(1.0, 1.0) == stellar.LOGG_SUN
    m, r = np.array([0.6, 1.0, 1.3]), np.array([0.0125, 1.0, 12.0])
    logg = stellar.logg_from_mr(m, r)
    np.testing.assert_allclose(stellar.radius_from_mlogg(m, logg), r, rtol=1e-12)
    # a 1.3 Msun giant with log g = 2.5 at 4800 K: L from R^2 (T/Tsun)^4
    r_g = stellar.radius_from_mlogg(1.3, 2.5)
    assert stellar.logl_from_teff_logg_mass(4800.0, 2.5, 1.3) == pytest.approx(stellar.logl_from_rt(r_g, 4800.0), abs=1e-12)


def test_non_positive_inputs_give_nan_without_warnings(recwarn):
    with np.errstate(all="raise"):
        assert np.isnan(stellar.teff_from_lr([-1.0, 1.0], [1.0, 0.0])).all()
        assert np.isnan(stellar.radius_from_lt(0.0, 5000.0))
        assert np.isnan(stellar.logl_from_rt(-1.0, 5000.0))
        assert np.isnan(stellar.logg_from_mr(0.0, 1.0))
    assert not recwarn.list
