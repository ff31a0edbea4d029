"""Metallicity conversions and the validity range of the fits."""

import numpy as np
import pytest

from hrstage.errors import HrstageInputError
from hrstage.models import metallicity as met


def test_constants_and_round_trip():
    # Tout et al. 1996 / HPT2000: the fits' solar Z is 0.02; range 1e-4..0.03 (formulae.md §1.3) [M]
    assert (met.Z_SUN_FITS, met.Z_MIN, met.Z_MAX) == (0.02, 1e-4, 0.03)
    assert met.z_from_feh(0.0) == pytest.approx(0.02)
    assert met.z_from_feh(-1.0) == pytest.approx(0.002)
    feh = np.array([-2.3, -1.0, 0.0, 0.17])
    np.testing.assert_allclose(met.feh_from_z(met.z_from_feh(feh)), feh, atol=1e-12)
    # formulae.md §2.9: zeta(0.001) = -1.30103
    assert met.zeta(0.001) == pytest.approx(-1.30103, abs=5e-6)


def test_clip_reports_what_it_moved():
    z, moved = met.clip_z([1e-5, 1e-4, 0.02, 0.05, np.nan])
    np.testing.assert_array_equal(z[:4], [1e-4, 1e-4, 0.02, 0.03])
    assert np.isnan(z[4])
    np.testing.assert_array_equal(moved, [True, False, False, True, False])


def test_check_names_the_bad_value():
    np.testing.assert_array_equal(met.check_z([1e-4, 0.03]), [1e-4, 0.03])
    with pytest.raises(HrstageInputError, match="0.05"):
        met.check_z([0.02, 0.05])
    with pytest.raises(ValueError, match="nan"):
        met.check_z(np.nan)
