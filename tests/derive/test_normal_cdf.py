"""The standard normal CDF of the photometric readings (``derive/_readings._ndtr``, standard library
erfc) against scipy's ``ndtr`` and against published values."""

import numpy as np
import pytest

from hrstage.derive._readings import _ndtr


def test_normal_cdf_matches_scipy_to_double_precision():
    special = pytest.importorskip("scipy.special")
    x = np.concatenate([np.linspace(-37.0, 9.0, 20001), [-np.inf, np.inf, 0.0, -0.0, 1e-300, -1e-300]])
    got, want = _ndtr(x), special.ndtr(x)
    # relative to the value, tails included (where 1 + erf would lose every digit). The CDF's
    # condition number is ~x^2 in the lower tail (d ln Phi / d ln|x| ~ x^2), so one rounding of
    # the argument moves it by ~x^2 units of the last place in either library
    ulp = np.finfo(float).eps
    tol = 4 * ulp * (1.0 + np.nan_to_num(x, posinf=0.0, neginf=0.0) ** 2) * want
    assert np.all(np.abs(got - want) <= tol)
    assert np.abs(got[np.abs(x) <= 3] - want[np.abs(x) <= 3]).max() <= 4 * ulp
    assert np.isnan(_ndtr(np.array([np.nan]))).all()


def test_normal_cdf_published_values():
    # the normal probability integral P(x) (Abramowitz & Stegun 1964, Table 26.1), 15 figures, from memory
    assert _ndtr(1.0) == pytest.approx(0.841344746068543, rel=1e-14)
    assert _ndtr(2.0) == pytest.approx(0.977249868051821, rel=1e-14)
    assert _ndtr(-3.0) == pytest.approx(1.0 - 0.998650101968370, rel=1e-11)
    assert _ndtr(0.0) == 0.5
    assert np.shape(_ndtr(np.zeros((2, 3)))) == (2, 3)
