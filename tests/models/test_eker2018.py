"""Eker et al. 2018 (MNRAS 479, 5491) main-sequence relations: check values of formulae.md §3.1."""

import numpy as np
import pytest

from hrstage.models import eker2018 as ek


def test_solar_values():
    # formulae.md §3.1 [C]: L(1 Msun) = 0.984 Lsun, R(1 Msun) = 0.992 Rsun
    assert ek.luminosity(1.0) == pytest.approx(0.984, abs=5e-4)
    assert ek.radius(1.0) == pytest.approx(0.992, abs=5e-4)
    # Stefan-Boltzmann with the two: Teff(1 Msun) close to solar (common practice: MLR+MRR of
    # eclipsing binaries reproduce the Sun within ~1 %)
    assert ek.teff(1.0) == pytest.approx(5772.0, rel=0.01)


@pytest.mark.parametrize(
    "m_break,below,above",
    # formulae.md §3.1 [C]: L jumps 0.0209 -> 0.0205 at 0.45, 0.176 -> 0.149 at 0.72,
    # 1.302 -> 1.264 at 1.05, 45.3 -> 39.9 at 2.4, 2789 -> 3359 Lsun at 7 Msun
    [(0.45, "0.0209", "0.0205"), (0.72, "0.176", "0.149"), (1.05, "1.302", "1.264"), (2.4, "45.3", "39.9"), (7.0, "2789", "3359")],
)
def test_documented_jumps(m_break, below, above):
    lo, hi = ek.luminosity([m_break, m_break * (1 + 1e-12)])
    decimals = len(below.split(".")[1]) if "." in below else 0
    assert lo == pytest.approx(float(below), abs=0.51 * 10**-decimals)
    decimals = len(above.split(".")[1]) if "." in above else 0
    assert hi == pytest.approx(float(above), abs=0.51 * 10**-decimals)


def test_against_classic_mlr_comparison():
    # formulae.md §3.2 [C]: Eker 2018 gives 734 Lsun at 5 Msun and 9333 Lsun at 10 Msun
    np.testing.assert_allclose(ek.luminosity([5.0, 10.0]), [734, 9333], atol=0.51)


def test_mrr_mtr_join_at_1_5():
    # The MRR (<= 1.5) and MLR+MTR (> 1.5) radii meet within the relations' scatter (~4 %, measured).
    r_lo, r_hi = ek.radius([1.5, 1.5000001])
    assert r_hi == pytest.approx(r_lo, rel=0.05)


def test_inverse_is_monotone_continuous_and_round_trips():
    lum = np.geomspace(float(ek.luminosity(0.179)), float(ek.luminosity(31.0)), 50_001)
    mass = ek.mass_from_luminosity(lum)
    assert np.isfinite(mass).all()
    assert np.all(np.diff(mass) >= 0)
    assert np.max(np.abs(np.diff(np.log10(mass)))) < 1e-3  # no jumps
    m = np.geomspace(0.179, 31.0, 2001)
    np.testing.assert_allclose(ek.mass_from_luminosity(ek.luminosity(m)), m, rtol=0.036)
    # far from the breaks the inverse is exact
    m = np.array([0.3, 0.6, 0.9, 1.6, 4.0, 15.0])
    np.testing.assert_allclose(ek.mass_from_luminosity(ek.luminosity(m)), m, rtol=1e-12)
    # the gap above the 7 Msun break maps to 7 Msun
    assert ek.mass_from_luminosity(3000.0) == pytest.approx(7.0)


def test_range_is_masked():
    assert ek.MASS_RANGE == (0.179, 31.0)
    assert np.isnan(ek.luminosity([0.1, 40.0])).all()
    assert np.isnan(ek.radius([0.1, 40.0])).all() and np.isnan(ek.teff([0.1, 40.0])).all()
    assert np.isnan(ek.mass_from_luminosity([1e-3, 1e6, -1.0, 0.0])).all()
    m = np.geomspace(0.179, 31.0, 11)
    np.testing.assert_allclose(ek.teff(m), [float(ek.teff(x)) for x in m], rtol=1e-14)
