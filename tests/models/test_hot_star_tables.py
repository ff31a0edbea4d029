"""The compiled hot-star and white-dwarf tables and their relations (pecaut_mamajek2013, montreal_wd).

Check values are rows of the published tables as compiled in hrstage/data (Pecaut & Mamajek 2013
dwarf sequence v2024.05.15; Montreal DA/DB synthetic photometry 2019-08)."""

import numpy as np
import pytest

from hrstage.models import montreal_wd, pecaut_mamajek2013 as pm


def test_dwarf_sequence_nodes():
    # Pecaut & Mamajek 2013 (v2024.05.15): B9V Bp-Rp -0.120, 10700 K; A0V -0.037, 9700 K, BCv -0.21
    assert pm.teff_from_bp_rp(-0.120) == pytest.approx(10700.0)
    assert pm.teff_from_bp_rp(-0.037) == pytest.approx(9700.0)
    assert pm.bc_v(9700.0) == pytest.approx(-0.21)
    # O3V 45900 K BCv -4.01; B2V 20600 K BCv -2.03 (same table)
    assert pm.bc_v(45900.0) == pytest.approx(-4.01)
    assert pm.bc_v(20600.0) == pytest.approx(-2.03)
    # A0V G-V 0.015 (same table); BC_G = BC_V - (G-V)
    assert pm.g_minus_v(-0.037) == pytest.approx(0.015)
    assert pm.bc_g(-0.037) == pytest.approx(-0.21 - 0.015)
    # validity enforced: NaN outside the tabulated Gaia colours and Teff
    assert np.isnan(pm.teff_from_bp_rp(-0.13)) and np.isnan(pm.teff_from_bp_rp(0.40))
    assert np.isnan(pm.bc_v(50000.0)) and np.isnan(pm.bc_v(7000.0))
    lo, hi = pm._bp_rp_range()
    assert (lo, hi) == pm.BP_RP_RANGE


def test_dwarf_sequence_joins_casagrande():
    # at (BP-RP)0 = 0.20 the sequence (8059 K) and Casagrande et al. 2021 DR3 (8149 K, log g 4.2)
    # differ by ~1 % (measured; docs/derive.md)
    from hrstage.models import casagrande2021
    t_pm = pm.teff_from_bp_rp(0.2)
    t_c = casagrande2021.teff(0.2, 4.2, 0.0, release="dr3")
    assert abs(t_pm / t_c - 1) < 0.02


@pytest.mark.parametrize("atm,teff,logg,mass", [("H", 10000.0, 8.0, 0.600), ("H", 20000.0, 7.5, 0.394),
                                                 ("He", 16000.0, 7.0, 0.234)])
def test_wd_grid_nodes_recovered(atm, teff, logg, mass):
    # a grid point read back through the inversion gives its own Teff, log g and mass
    # (Montreal DA: 10000 K, log g 8.0, 0.600 Msun; 20000 K, 7.5, 0.394; DB: 16000 K, 7.0, 0.234)
    t = montreal_wd._table()
    s = (t["atmosphere"] == atm) & (t["teff"] == teff) & (t["logg"] == logg)
    assert s.sum() == 1
    c = (t["m_bp"] - t["m_rp"])[s]
    r = montreal_wd.read(c, t["m_g"][s], atmosphere=atm)
    assert r["teff"][0] == pytest.approx(teff, rel=1e-9)
    assert r["logg"][0] == pytest.approx(logg, abs=1e-9)
    assert r["mass"][0] == pytest.approx(mass, abs=1e-9)
    assert r["bc"][0] == pytest.approx((t["mbol"] - t["m_g"])[s][0])
    assert not r["extrapolated"][0]


def test_wd_grid_edges():
    # brighter than the log g 6.5 extrapolation edge: no white-dwarf reading (NaN)
    edge = montreal_wd.sequence_mag(0.0, 6.5)
    assert np.isnan(montreal_wd.read(0.0, edge - 0.2)["teff"][()])
    r = montreal_wd.read(0.0, edge + 0.2)
    assert np.isfinite(r["teff"][()]) and r["extrapolated"][()]
    # sequences are monotonic: fainter at higher log g for the same colour
    assert montreal_wd.sequence_mag(0.3, 7.0) < montreal_wd.sequence_mag(0.3, 8.0) < montreal_wd.sequence_mag(0.3, 9.0)
    # DR2 photometry is used as it is
    c, m = montreal_wd.to_grid_passbands(0.1, 11.0, "dr2")
    assert (float(c), float(m)) == (0.1, 11.0)
    with pytest.raises(ValueError):
        montreal_wd.sequences("X")
