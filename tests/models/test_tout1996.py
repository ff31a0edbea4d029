"""Tout et al. 1996 ZAMS: check values of formulae.md section 1.4 and original SSE output."""

import numpy as np
import pytest

from hrstage.models import tout1996

from models_check_tables import TOUT_TABLE, close_to_print, rows


@pytest.mark.parametrize("row", rows(TOUT_TABLE), ids=lambda r: f"M={r[0]}")
def test_table_section_1_4(row):
    # formulae.md §1.4 (Tout et al. 1996 eqs 1-2, Tables 1-2) [C]; tolerance: printed digits
    m = float(row[0])
    checks = [
        (tout1996.zams_luminosity(m, 0.02), row[1]),
        (tout1996.zams_radius(m, 0.02), row[2]),
        (tout1996.zams_teff(m, 0.02), row[3]),
        (tout1996.zams_luminosity(m, 0.001), row[4]),
        (tout1996.zams_radius(m, 0.001), row[5]),
        (tout1996.zams_teff(m, 0.001), row[6]),
        (tout1996.zams_luminosity(m, 1e-4), row[7]),
        (tout1996.zams_radius(m, 1e-4), row[8]),
    ]
    for value, text in checks:
        assert close_to_print(float(value), text), (m, float(value), text)


def test_original_sse_output():
    # Original SSE Fortran output stored in the AMUSE SSE test suite (hex floats decoded in
    # formulae.md §1.4) [V-ref]: 1 Msun, Z = 0.02 at age 1e-6 Myr; ZAMS radii of 2 and 3 Msun.
    assert tout1996.zams_luminosity(1.0, 0.02) == pytest.approx(0.6977165691801938, rel=1e-9)
    assert tout1996.zams_radius(1.0, 0.02) == pytest.approx(0.8882494503139868, rel=1e-9)
    # (printed to 10 significant digits, truncated: tolerance one unit of the last digit)
    assert tout1996.zams_radius(2.0, 0.02) == pytest.approx(1.610210385, abs=1e-9)
    assert tout1996.zams_radius(3.0, 0.02) == pytest.approx(1.979134445, abs=1e-9)


def test_massive_zams_stars_are_hot():
    # Fact of the trade (common practice): an 18-19 Msun main-sequence star (late O / early B)
    # is far hotter than 20,000 K, at any metallicity of the fits.
    for z in (1e-4, 0.001, 0.02, 0.03):
        assert np.all(tout1996.zams_teff([18.0, 19.0], z) > 25_000.0)


def test_low_metallicity_zams_is_hotter_and_smaller():
    # Common practice: at fixed mass, metal-poor ZAMS stars are hotter (and, above ~1.5 Msun,
    # more compact; near 1 Msun the fits give a slightly larger radius at low Z, formulae.md §1.4).
    m = np.array([0.5, 1.0, 2.0, 5.0, 20.0])
    assert np.all(tout1996.zams_teff(m, 0.001) > tout1996.zams_teff(m, 0.02))
    assert np.all(tout1996.zams_radius(m[2:], 0.001) < tout1996.zams_radius(m[2:], 0.02))


def test_mass_range_masked_and_bad_z_raises():
    out = tout1996.zams_luminosity([0.05, 0.1, 100.0, 150.0, np.nan], 0.02)
    assert np.isnan(out[[0, 3, 4]]).all() and np.isfinite(out[[1, 2]]).all()
    assert tout1996.MASS_RANGE == (0.1, 100.0)
    for bad in (0.05, 1e-5, np.nan):
        with pytest.raises(ValueError, match="metallicity"):
            tout1996.zams_radius(1.0, bad)


def test_vectorised_equals_scalar_loop_and_broadcasts():
    m = np.geomspace(0.1, 100, 37)
    z = np.array([1e-4, 0.001, 0.004, 0.02, 0.03])
    grid = tout1996.zams_luminosity(m[:, None], z[None, :])
    assert grid.shape == (37, 5)
    loop = np.array([[float(tout1996.zams_luminosity(mi, zi)) for zi in z] for mi in m])
    np.testing.assert_array_equal(grid, loop)
    np.testing.assert_array_equal(tout1996.zams_radius(m, 0.02), [float(tout1996.zams_radius(x, 0.02)) for x in m])


def test_no_floating_point_warnings(recwarn):
    with np.errstate(all="raise"):
        m = np.geomspace(0.1, 100, 500)
        for z in (1e-4, 0.02, 0.03):
            assert np.isfinite(tout1996.zams_teff(m, z)).all()
        tout1996.zams_luminosity([-1.0, 0.0, 1e3], 0.02)
    assert not recwarn.list
