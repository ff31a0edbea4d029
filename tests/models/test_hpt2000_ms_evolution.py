"""HPT2000 main-sequence evolution L(t), R(t) (eqs 12-24)."""

import numpy as np
import pytest

from hrstage.models import hpt2000 as hpt
from hrstage.models import tout1996

MASSES = np.array([0.12, 0.3, 0.6, 0.9, 1.0, 1.05, 1.2, 1.5, 2.0, 3.0, 5.0, 10.0, 20.0, 50.0, 100.0])
ZS = (1e-4, 0.0008, 0.001, 0.004, 0.02, 0.03)


@pytest.mark.parametrize("z", ZS)
def test_starts_on_the_zams(z):
    # By construction of HPT2000 eqs 12-13 (tau = 0): L = L_ZAMS, R = R_ZAMS of Tout et al. 1996
    # (radius above ~0.13 Msun, where the degenerate-radius floor does not bind).
    lum, rad = hpt.ms_luminosity_radius(MASSES, z, 0.0)
    np.testing.assert_allclose(lum, tout1996.zams_luminosity(MASSES, z), rtol=1e-12)
    big = MASSES > 0.13
    np.testing.assert_allclose(rad[big], tout1996.zams_radius(MASSES[big], z), rtol=1e-12)
    assert np.all(rad >= tout1996.zams_radius(MASSES, z))


@pytest.mark.parametrize("z", ZS)
def test_ends_on_the_tams(z):
    # By construction (tau = 1, hook terms closed): L = L_TMS (eq 8), R = R_TMS (eq 9).
    lum, rad = hpt.ms_luminosity_radius(MASSES, z, hpt.t_ms(MASSES, z))
    np.testing.assert_allclose(lum, hpt.l_tms(MASSES, z), rtol=1e-10)
    np.testing.assert_allclose(rad, hpt.r_tms(MASSES, z), rtol=1e-10)


def test_degenerate_radius_floor_at_lowest_mass():
    # HPT2000 (as in SSE): R >= 0.0258 (1 + X)^(5/3) M^(-1/3), X = 0.76 - 3Z, for M < M_hook - 0.3;
    # at 0.1 Msun this exceeds the Tout ZAMS radius (0.1346 vs 0.1305 Rsun, formulae.md §1.4).
    _, rad = hpt.ms_luminosity_radius(0.1, 0.02, 0.0)
    assert rad == pytest.approx(0.0258 * (1.0 + 0.76 - 0.06) ** (5 / 3) * 0.1 ** (-1 / 3), rel=1e-12)


def test_solar_track_is_monotone_and_the_sun_is_about_one_lsun():
    t = np.linspace(0.0, float(hpt.t_ms(1.0, 0.02)), 400)
    lum, rad = hpt.ms_luminosity_radius(1.0, 0.02, t)
    assert np.all(np.diff(lum) > 0)  # common practice: a solar-type star brightens on the MS
    assert np.all(np.diff(rad) > 0)
    # Common practice (from memory): the present Sun, 4.57 Gyr after the ZAMS, is about 1 Lsun and
    # 1 Rsun -- the Z = 0.02 fit is expected to agree within ~15 %.
    l_now, r_now = hpt.ms_luminosity_radius(1.0, 0.02, 4570.0)
    assert l_now == pytest.approx(1.0, rel=0.15)
    assert r_now == pytest.approx(1.0, rel=0.15)


def test_ages_outside_the_ms_are_masked():
    tm = float(hpt.t_ms(2.0, 0.02))
    lum, rad = hpt.ms_luminosity_radius(2.0, 0.02, [-1.0, 0.5 * tm, 1.0001 * tm])
    assert np.isnan(lum[[0, 2]]).all() and np.isnan(rad[[0, 2]]).all()
    assert np.isfinite(lum[1]) and np.isfinite(rad[1])
    lum, _ = hpt.ms_luminosity_radius([0.05, 150.0], 0.02, 1.0)
    assert np.isnan(lum).all()


def test_massive_ms_stars_stay_hot():
    # Common practice: 18-19 Msun main-sequence stars are far hotter than 20,000 K at any MS age.
    from hrstage.models.stellar import teff_from_lr

    for m in (18.0, 19.0):
        t = np.linspace(0.0, float(hpt.t_ms(m, 0.02)), 50)
        teff = teff_from_lr(*hpt.ms_luminosity_radius(m, 0.02, t))
        assert np.all(teff > 20_000.0)


def test_broadcasting_and_loop_equality():
    m = np.array([0.5, 1.0, 3.0, 30.0])[:, None, None]
    z = np.array([0.001, 0.02])[None, :, None]
    frac = np.array([0.0, 0.3, 0.9, 1.0])[None, None, :]
    t = frac * hpt.t_ms(m, z)
    lum, rad = hpt.ms_luminosity_radius(m, z, t)
    assert lum.shape == rad.shape == (4, 2, 4)
    for i, mi in enumerate(m.ravel()):
        for j, zj in enumerate(z.ravel()):
            for k in range(4):
                lk, rk = hpt.ms_luminosity_radius(mi, zj, t[i, j, k])
                assert lum[i, j, k] == pytest.approx(float(lk), rel=1e-13)
                assert rad[i, j, k] == pytest.approx(float(rk), rel=1e-13)


def test_age_of_universe_edge_is_finite_and_warning_free(recwarn):
    m = np.geomspace(0.1, 100, 600)
    with np.errstate(all="raise"):
        for z in ZS:
            tm = hpt.t_ms(m, z)
            t = np.minimum(13_800.0, tm)
            lum, rad = hpt.ms_luminosity_radius(m, z, t)
            assert np.isfinite(lum).all() and np.isfinite(rad).all()
            assert np.all(lum >= 0.999 * tout1996.zams_luminosity(m, z))
    assert not recwarn.list
