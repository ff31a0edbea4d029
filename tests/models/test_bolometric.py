"""Check values of the bolometric corrections (hrstage.models.bolometric)."""

import numpy as np
import pytest
from astropy import constants as const

from hrstage.models import bolometric as bc


@pytest.mark.parametrize("teff, expected", [
    (3500, -2.305), (4000, -1.124), (4500, -0.602), (5000, -0.286), (5777, -0.080),
    (6500, 0.007), (8000, 0.024), (10000, -0.249), (20000, -1.892), (30000, -2.891),
])
def test_flower_bcv_check_values(teff, expected):
    # formulae.md §4.1 check values [C] (Torres 2010 Table 1 coefficients)
    assert bc.bc_v_flower(teff) == pytest.approx(expected, abs=6e-4)


def test_flower_bcv_solar_zero_point():
    # Torres 2010: BC_V,sun = -0.080 on Flower's scale and V_sun = -26.76 -> M_bol,sun = 4.73
    # (formulae.md §4.1 [V-doc] for V_sun, [M] for the derivation)
    assert bc.bc_v_flower(5772.0) == pytest.approx(-0.080, abs=0.002)
    assert bc.FLOWER_MBOL_SUN == 4.73
    m_v_sun = -26.76 + 5 * np.log10((10 * const.pc / const.au).decompose().value)  # V at 10 pc
    assert m_v_sun == pytest.approx(4.81, abs=0.01)              # M_V,sun = 4.81 common practice
    assert m_v_sun + bc.bc_v_flower(5772.0) == pytest.approx(4.73, abs=0.01)


def test_flower_bcv_range_and_breaks():
    lo, hi = bc.FLOWER_LOGT_RANGE
    out = bc.bc_v_flower([10 ** (lo - 0.01), 10 ** (hi + 0.01), np.nan, -5.0, 0.0])
    assert np.all(np.isnan(out))
    # the pieces do not join: 0.022 mag at log T = 3.70, 0.003 at 3.90 (formulae.md §4.1 [C])
    eps = 1e-9
    for x, jump in ((3.70, 0.022), (3.90, 0.003)):
        lo_side, hi_side = bc.bc_v_flower([10 ** (x - eps), 10 ** x])
        assert abs(hi_side - lo_side) == pytest.approx(jump, abs=0.0015)


@pytest.mark.parametrize("teff, expected", [
    (5772, 0.060), (5000, -0.047), (4500, -0.211), (4000, -0.498), (3500, -0.877),
    (6500, 0.083), (8000, 0.019),
])
def test_andrae_bcg_check_values(teff, expected):
    # formulae.md §4.2 check values [C] (Andrae et al. 2018 coefficients)
    assert bc.bc_g_andrae(teff) == pytest.approx(expected, abs=6e-4)


def test_andrae_cool_branch_step_and_range():
    # 4000 K on the cool branch gives -0.494 (0.004 mag step), formulae.md §4.2 [C]
    assert bc.bc_g_andrae(4000 - 1e-7) == pytest.approx(-0.494, abs=6e-4)
    assert np.all(np.isnan(bc.bc_g_andrae([3299.0, 8001.0, np.nan])))
    assert np.all(np.isnan(bc.bc_g_andrae_sigma([3299.0, 8001.0])))


def test_andrae_sigma_is_small_and_positive_in_range():
    t = np.linspace(3300, 8000, 200)
    s = bc.bc_g_andrae_sigma(t)
    assert np.all(s >= 0) and np.all(s < 0.2)
    # b_0 = 0.02634 at the reference temperature (formulae.md §4.2, provisional single source)
    assert bc.bc_g_andrae_sigma(5772.0) == pytest.approx(0.02634, abs=1e-5)


def test_iau_b2_solar_bolometric_magnitude():
    # IAU 2015 B2: M_bol,sun = -2.5 log10(L_sun / L0) = 4.74 (astropy iau2015 constants)
    m = -2.5 * np.log10((const.L_sun / const.L_bol0).decompose().value)
    assert m == pytest.approx(bc.IAU_MBOL_SUN, abs=1e-3)
    assert bc.logl_from_mbol(bc.mbol_from_lum(0.0)) == 0.0
