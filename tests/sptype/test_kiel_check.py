"""The MK luminosity-class check on the Kiel position (log g given) and class III along the giant branch."""

import numpy as np
import pytest

from hrstage.sptype import check_types

# K0 giant: Teff 4800 K, log g 2.5, L 60 Lsun; K0 dwarf log g ~4.5 (common practice, from memory)
T_K0III, G_K0III, L_K0III = 4800.0, 2.5, 60.0


def test_kiel_catches_what_a_poor_parallax_hides():
    lt, ll = np.log10([T_K0III]), [np.log10(L_K0III)]
    # HR position with a poor L (0.8 dex, e.g. a 100 % parallax error): the dwarf type is not caught
    hr = check_types(["K0V"], lt, ll, logt_err=[0.005], logl_err=[0.8])
    assert "lumclass" not in hr.verdict[0]
    # with log g the same type is a luminosity-class conflict, and the giant type is consistent
    k = check_types(["K0V", "K0III"], np.r_[lt, lt], ll * 2, logt_err=[0.005] * 2, logl_err=[0.8] * 2,
                    logg=[G_K0III] * 2, logg_err=[0.1] * 2)
    assert "lumclass" in k.verdict[0] and k.nsigma_lum[0] > 5
    assert k.verdict[1] == "consistent"
    assert "log g" in k.reason[0]


def test_sun_on_kiel():
    # IAU 2015 nominal Sun: 5772 K, log g 4.438, L = 1: a G2 dwarf
    k = check_types(["G2V"], [np.log10(5772.0)], [0.0], logg=[4.438], logg_err=[0.05])
    assert k.verdict[0] == "consistent"
    # a row without log g keeps the HR check
    k2 = check_types(["G2V", "G2V"], np.log10([5772.0] * 2), [0.0, 0.0], logg=[4.438, np.nan])
    assert "Kiel" in k2.reason[0] and "Kiel" not in k2.reason[1]


def test_class_iii_along_the_giant_branch():
    # a K3 giant at log L 3.1 (upper RGB, below the HPT2000 tip of the oldest stars, log L 3.44)
    # is brighter than the class-III mean sequence (mostly clump stars) but a normal giant
    k = check_types(["K3III"], np.log10([4150.0]), [3.1], logt_err=[0.01], logl_err=[0.05])
    assert k.verdict[0] == "consistent"
    # above the tip the class-III excess counts again
    k = check_types(["K3III"], np.log10([4150.0]), [3.9], logt_err=[0.01], logl_err=[0.05])
    assert "lumclass" in k.verdict[0]
