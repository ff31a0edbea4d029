"""The derive paths on the Sun, on edge cases and on their error model."""

import numpy as np
import pytest
from astropy import constants as const
from astropy import units as u

from hrstage import flags as F
from hrstage.derive import HRPosition, from_gaia, from_johnson, from_teff_logg, from_teff_lum, from_teff_radius
from hrstage.errors import HrstageInputError

PLX_1AU = (1 * u.rad).to_value(u.mas)     # parallax of a body at 1 au (exact geometry)


def test_sun_through_johnson():
    # V_sun = -26.76 at 1 au (Torres 2010; formulae.md §4.1 [V-doc]); B-V_sun = 0.65 (common practice)
    r = from_johnson(-26.76, 0.65, PLX_1AU)
    assert r.extra["abs_mag"][0] == pytest.approx(4.81, abs=0.01)       # M_V,sun = 4.81 common practice
    assert r.teff[0] == pytest.approx(5772, abs=73)                     # within Casagrande 2010 B-V scatter
    assert 10 ** r.logl[0] == pytest.approx(1.0, rel=0.03)              # L = 1 Lsun within a few %
    assert "Casagrande+2010 (B-V)0" in r.source[0]
    assert r.flags[0] == F.NO_EXTINCTION


def test_sun_through_gaia():
    # M_G,sun = 4.66 and (BP-RP)_sun = 0.82 (formulae.md §4.2 [V-doc] and §5.3 [M]); at 10 pc
    r = from_gaia(4.66, 0.82, 100.0)
    assert r.teff[0] == pytest.approx(5772, abs=73)
    assert 10 ** r.logl[0] == pytest.approx(1.0, rel=0.04)
    assert r.extra["logg_used"][0] == pytest.approx(4.44, abs=0.05)     # log g_sun 4.438 (IAU B3 nominal)


def test_sun_through_radius_and_lum():
    r = from_teff_radius(5772 * u.K, const.R_sun)
    assert r.logl[0] == pytest.approx(0.0, abs=1e-9)                    # IAU 2015 B3: L = R^2 T^4 nominal
    r = from_teff_lum(5772.0, const.L_sun)
    assert r.logl[0] == pytest.approx(0.0, abs=1e-12)
    r = from_teff_lum(5772.0, 3.828e33 * u.erg / u.s)                   # L_sun^N = 3.828e26 W (IAU 2015 B3)
    assert r.logl[0] == pytest.approx(0.0, abs=1e-12)
    r = from_teff_lum(5772.0, u.Dex(0.3, u.dex(u.L_sun)))
    assert r.logl[0] == pytest.approx(0.3)
    r = from_teff_lum([5772.0, 6000.0], [0.0, 0.5], lum_is_log=True, lum_err=0.1, teff_err=60)
    assert np.allclose(r.logl, [0.0, 0.5]) and np.allclose(r.logl_err, 0.1) and np.all(r.corr == 0)
    assert r.logt_err[0] == pytest.approx(60 / (5772 * np.log(10)))


def test_radius_path_errors_are_correlated():
    r = from_teff_radius(5772.0, 2.0, teff_err=100.0, radius_err=0.0)
    assert r.corr[0] == pytest.approx(1.0)
    assert r.logl_err[0] == pytest.approx(4 * r.logt_err[0])
    r = from_teff_radius(5772.0, 2.0, teff_err=100.0, radius_err=0.2)
    assert 0 < r.corr[0] < 1


def test_sun_through_logg():
    pytest.importorskip("hrstage.classifier", reason="layer 3 not available")
    from hrstage import classifier
    if not hasattr(classifier, "logl_from_logg"):
        pytest.skip("hrstage.classifier.logl_from_logg not available yet")
    # log g_sun = 4.438 (IAU 2015 B3 nominal GM and R): the model mass of a solar star is ~1 Msun
    r = from_teff_logg(5772.0, 4.438, teff_err=50, logg_err=0.1)
    assert r.logl[0] == pytest.approx(0.0, abs=0.15)
    assert 0.7 < r.extra["mass_used"][0] < 1.3
    assert np.isfinite(r.corr[0]) and 0.03 < r.logl_err[0] < 0.2
    # the propagated log g error matches a brute-force recomputation at log g +- 0.1
    # (less than one-to-one: the model mass grows with L at fixed Teff)
    e = from_teff_logg(5772.0, 4.438, logg_err=0.1)
    up, dn = from_teff_logg(5772.0, [4.538, 4.338]).logl
    assert e.logl_err[0] == pytest.approx(abs(up - dn) / 2, rel=0.25)
    # a row without log g is flagged, not dropped
    bad = from_teff_logg([5772.0, 5772.0], [4.438, np.nan])
    assert len(bad) == 2 and np.isnan(bad.logl[1]) and bad.flags[1] & F.MISSING_INPUT


def test_parallax_edge_cases():
    r = from_gaia([10.0, 10.0, 10.0, 10.0], [1.0, 1.0, 1.0, 1.0], [-1.0, 0.0, np.nan, 1.0],
                  parallax_err=[0.1, 0.1, 0.1, 0.5])
    assert np.all(np.isnan(r.logl[:3])) and np.isfinite(r.logl[3])
    assert r.flags[0] & F.NONPOSITIVE_PARALLAX and r.flags[1] & F.NONPOSITIVE_PARALLAX
    assert r.flags[2] & F.MISSING_INPUT
    assert r.flags[3] & F.LOW_PARALLAX_SNR          # 1.0 / 0.5 = 2 < 5
    assert np.all(np.isfinite(r.teff))              # Teff from the colour does not need a distance
    assert np.all(np.isnan(r.logl_err[:3])) and np.all(np.isnan(r.corr[:3]))


def test_parallax_zero_point_and_error_term():
    a = from_gaia(10.0, 1.0, 1.0, parallax_err=0.1)
    b = from_gaia(10.0, 1.0, 1.0, parallax_err=0.1, parallax_zp=-0.02)   # corrected = 1.02 mas
    assert b.extra["parallax_corrected"][0] == pytest.approx(1.02)
    assert a.logl[0] - b.logl[0] == pytest.approx(2 * np.log10(1.02), abs=2e-3)
    # parallax error alone: sigma(log L) = 2 sigma_plx / (plx ln 10) (first-order propagation)
    c = from_johnson(5.0, 1.0, 10.0, parallax_err=0.5, teff=4800.0)
    assert c.logl_err[0] == pytest.approx(2 * 0.5 / (10.0 * np.log(10)), rel=1e-6)


def test_no_nan_without_flag_and_rows_kept():
    rng = np.random.default_rng(3)
    n = 2000
    g = rng.uniform(5, 20, n)
    c = rng.uniform(-1, 4, n)
    p = rng.uniform(-2, 30, n)
    g[::17] = np.nan
    c[::23] = np.nan
    r = from_gaia(g, c, p, parallax_err=0.2, a_v=0.2)
    assert len(r) == n
    bad = ~np.isfinite(r.logl) | ~np.isfinite(r.teff)
    explain = F.MISSING_INPUT | F.BAD_INPUT | F.NONPOSITIVE_PARALLAX | F.COLOUR_OUT_OF_RANGE | F.OUTSIDE_VALIDITY
    assert np.all(r.flags[bad] & explain)
    j = from_johnson(g, c / 2, p, parallax_err=0.2)
    bad = ~np.isfinite(j.logl) | ~np.isfinite(j.teff)
    assert np.all(j.flags[bad] & explain)


def test_colour_out_of_range_and_fallbacks():
    # hot star: (BP-RP)_0 < 0.2 is outside Casagrande 2021 -> the Pecaut & Mamajek 2013 reading
    # (0.0 lies between A0V, -0.037 / 9700 K, and A1V, 0.005 / 9300 K, in the sequence)
    r = from_gaia(8.0, 0.0, 5.0)
    assert 9300 < r.teff[0] < 9700 and "Pecaut" in r.source[0] and not r.flags[0] & F.COLOUR_OUT_OF_RANGE
    # bluer than the sequence's Gaia colours (B9V, -0.120) and bright (M_G = 1.5 < 2): the O-B8 reading
    # (models/early_type_gaia.py), flagged COLOUR_SATURATED with a wide Teff error (>= 0.04 dex)
    r = from_gaia(8.0, -0.3, 5.0)
    assert 12300 < r.teff[0] < 20600 and "O-B8" in r.source[0]       # between B8V and B2V (PM13)
    assert r.flags[0] & F.COLOUR_SATURATED and not r.flags[0] & F.COLOUR_OUT_OF_RANGE
    assert r.logt_err[0] >= 0.04
    # given Teff outside 3300-8000 K: BC_G from Flower BC_V - (G-V) (BC_FALLBACK)
    r = from_gaia(8.0, 0.0, 5.0, teff=10000.0)
    assert np.isfinite(r.logl[0]) and r.flags[0] & F.BC_FALLBACK
    assert "Riello" in r.source[0]
    # ...which agrees with the Johnson path for the same star: V = G - (G-V) (Riello et al. 2021)
    from hrstage.models import riello2021
    v = 8.0 - riello2021.g_minus_v(0.0)
    j = from_johnson(v, 0.0, 5.0, teff=10000.0)
    assert r.logl[0] == pytest.approx(j.logl[0], abs=0.005)     # 4.73 vs 4.74 zero points reconciled
    # Mucciarelli relation outside its range falls back to Casagrande 2021 with the flag
    r = from_gaia(8.0, 0.3, 5.0, teff_relation="mucciarelli2021")
    assert np.isfinite(r.teff[0]) and r.flags[0] & F.COLOUR_OUT_OF_RANGE and "fallback" in r.source[0]
    r = from_gaia(8.0, 0.82, 100.0, teff_relation="mucciarelli2021")
    assert "Mucciarelli+2021 dwarf" in r.source[0]


def test_extinction_inputs():
    # E(B-V) -> A_V = R_V E(B-V); dereddened colour uses E(B-V) itself
    j = from_johnson(5.0, 0.75, 10.0, e_b_v=0.1, r_v=3.1)
    assert j.extra["extinction"][0] == pytest.approx(0.31)
    assert j.extra["colour0"][0] == pytest.approx(0.65)
    assert not j.flags[0] & F.NO_EXTINCTION
    # A_G given directly is used as is; A_V only: A_G/A_V from the G23 curve at the G pivot
    g1 = from_gaia(10.0, 1.0, 2.0, a_g=0.5, e_bp_rp=0.2)
    assert g1.extra["extinction"][0] == pytest.approx(0.5) and g1.extra["colour0"][0] == pytest.approx(0.8)
    g2 = from_gaia(10.0, 1.0, 2.0, a_v=1.0)
    assert 0.75 < g2.extra["extinction"][0] < 0.95          # A_G/A_V ~0.8-0.9 for R_V = 3.1 (common practice)
    assert 0.35 < g2.extra["colour_excess"][0] < 0.5        # E(BP-RP)/A_V ~0.42-0.48 (common practice)
    with pytest.raises(HrstageInputError):
        from_gaia(10.0, 1.0, 2.0, a_v=1.0, r_v=9.0)
    with pytest.raises(HrstageInputError):
        from_gaia(10.0, 1.0, 2.0, a_v=1.0, r_v=[3.1, 3.2])


def test_quantity_scalar_and_masked_input():
    a = from_gaia(10 * u.mag, 1.0 * u.mag, 2.0 * u.mas)
    b = from_gaia(10.0, 1.0, 0.002 * u.arcsec)
    assert a.logl[0] == pytest.approx(b.logl[0])
    assert isinstance(a, HRPosition) and len(a) == 1
    r = from_gaia([10.0, 11.0, 12.0], 1.0, 2.0)        # scalars broadcast
    assert len(r) == 3
    m = np.ma.masked_array([10.0, 11.0], mask=[False, True])
    r = from_gaia(m, 1.0, 2.0)
    assert np.isnan(r.logl[1]) and r.flags[1] & F.MISSING_INPUT
    with pytest.raises(HrstageInputError):
        from_gaia(10.0 * u.K, 1.0, 2.0)
    with pytest.raises(HrstageInputError):
        from_gaia([1.0, 2.0], [1.0, 2.0, 3.0], 2.0)
    with pytest.raises(HrstageInputError):
        from_gaia(["a"], 1.0, 2.0)


def test_bad_values_flagged():
    r = from_teff_lum([-10.0, 5000.0, np.inf], [1.0, -1.0, 1.0])
    assert r.flags[0] & F.BAD_INPUT and r.flags[1] & F.BAD_INPUT and r.flags[2] & F.BAD_INPUT
    assert np.all(np.isnan(r.logl[1:2])) and np.isnan(r.teff[0])
    r = from_gaia(10.0, 1.0, 2.0, g_err=-0.1)
    assert r.flags[0] & F.BAD_INPUT


def test_error_model_gaia():
    # colour error: log T and log L errors anti-correlated through BC_G(Teff) (BC rises with Teff
    # below ~6500 K, so a hotter Teff lowers L)
    r = from_gaia(10.0, 1.2, 5.0, bp_rp_err=0.02, g_err=0.0, parallax_err=0.0)
    assert r.logt_err[0] > 0 and r.logl_err[0] > 0
    assert -1 <= r.corr[0] < 0
    # calibration scatter alone (zero measurement errors) still gives a Teff error (Casagrande 2021:
    # ~70 K + 20 K zero point in quadrature; the 70 K scatter is from memory, the 20 K zero point is
    # the author's code, formulae.md §5.4)
    r0 = from_gaia(10.0, 1.2, 5.0)
    sig_t = r0.logt_err[0] * np.log(10) * r0.teff[0]
    assert sig_t == pytest.approx(np.hypot(70, 20), rel=1e-6)
    # finite-difference Jacobian vs brute-force recomputation
    h = 1e-4
    up = from_gaia(10.0, 1.2 + h, 5.0)
    dn = from_gaia(10.0, 1.2 - h, 5.0)
    dlogt = (up.logt[0] - dn.logt[0]) / (2 * h)
    sig_c = 0.02
    var_t = (dlogt * sig_c) ** 2 + r0.logt_err[0] ** 2
    assert r.logt_err[0] == pytest.approx(np.sqrt(var_t), rel=0.02)


def test_as_columns_matches_column_table():
    from hrstage.columns import COLUMNS
    r = from_johnson([5.0, 6.0], [0.6, 1.1], [10.0, 5.0])
    cols = r.as_columns()
    assert set(cols) <= set(COLUMNS)
    assert cols["flags"].dtype == np.int64 and cols["hr_source"].dtype == object
    assert "distance_pc" in r.as_columns(extra=True)
    assert r.cov.shape == (2, 2, 2)


def test_johnson_m_dwarf_b_v_flagged():
    # an M dwarf with only B-V: Flower's Teff kept but flagged (B-V saturates beyond ~1.4)
    r = from_johnson(10.0, 1.6, 100.0)
    assert r.flags[0] & F.COLOUR_OUT_OF_RANGE
    # with V-Ks inside Casagrande 2010's range the dwarf uses it
    r = from_johnson(6.0, 1.0, 100.0, v_ks=2.3)
    assert "V-Ks" in r.source[0] and not r.flags[0] & F.COLOUR_OUT_OF_RANGE


def test_white_dwarf_reading_on_both_paths():
    # a DA white dwarf of the Montreal grid (10 000 K, log g 8.0, 0.600 Msun; M_V 11.594 and
    # M_G 12.156 in the compiled table) at 20 pc, seen through Johnson and through Gaia DR2 photometry
    from hrstage.models import montreal_wd

    t = montreal_wd._table()
    s = (t["atmosphere"] == "H") & (t["teff"] == 10000.0) & (t["logg"] == 8.0)
    mu = 5 * np.log10(20.0) - 5
    j = from_johnson(t["m_v"][s] + mu, (t["m_b"] - t["m_v"])[s], 50.0)
    g = from_gaia(t["m_g"][s] + mu, (t["m_bp"] - t["m_rp"])[s], 50.0, gaia_release="dr2")
    for r in (j, g):
        assert r.teff[0] == pytest.approx(10000.0, rel=1e-6)
        assert r.extra["white_dwarf"]["mass"][0] == pytest.approx(0.600, abs=1e-6)
        assert list(r.extra["white_dwarf"]["rows"]) == [0]
        assert "white dwarf" in r.source[0]
        assert not r.flags[0] & (F.OUTSIDE_VALIDITY | F.COLOUR_OUT_OF_RANGE)
    # L = -0.4 (M_bol - 4.74) with the grid's M_bol
    assert j.logl[0] == pytest.approx(-0.4 * (t["mbol"][s][0] - 4.74), abs=1e-9)
    assert g.logl[0] == pytest.approx(j.logl[0], abs=1e-9)
    # the DB grid as the reading's atmosphere
    h = from_gaia(t["m_g"][s] + mu, (t["m_bp"] - t["m_rp"])[s], 50.0, gaia_release="dr2", wd_atmosphere="He")
    assert "DB grid" in h.source[0] and h.teff[0] != g.teff[0]
    with pytest.raises(HrstageInputError):
        from_gaia(12.0, 0.1, 50.0, wd_atmosphere="DA")


def test_johnson_giant_b_v_turnover_flagged_and_widened():
    # the same colours on a giant (M_V ~ 0 at 100 pc) and on a dwarf (M_V ~ 7.5 at 100 pc)
    from hrstage.models import bolometric, giant_bv_turnover

    bv = np.array([1.0, 1.2, 1.5])
    giant = from_johnson(np.full(3, 5.0), bv, np.full(3, 10.0), parallax_err=0.1, v_err=0.01, b_v_err=0.02)
    dwarf = from_johnson(np.full(3, 7.5), bv, np.full(3, 100.0), parallax_err=0.1, v_err=0.01, b_v_err=0.02)
    sat = (giant.flags & F.COLOUR_SATURATED) != 0
    assert sat.tolist() == [False, True, True]            # from (B-V)_0 = 1.15 on the giant branch
    assert not (dwarf.flags & F.COLOUR_SATURATED).any()   # dwarfs have their own limit (1.40)
    # (B-V)_0 = 1.2 keeps the K-giant error; 1.5 is saturated: its log Teff error reaches half-way to the
    # late-M reading and log L moves with it through BC_V (Flower/Torres: BC_V(4000 K) = -1.124,
    # BC_V(3500 K) = -2.305, formulae.md 4.1 [C]: cooler = brighter, anti-correlated)
    assert giant.logt_err[1] < 0.015
    extra = giant_bv_turnover.saturated_logt_sigma(giant.logt[2])
    assert giant.logt_err[2] == pytest.approx(np.hypot(extra, giant.logt_err[0]), rel=0.3)
    assert giant.logt_err[2] > 0.03 and giant.logl_err[2] > 0.15 and giant.corr[2] < -0.9
    slope = -0.4 * (bolometric.bc_v_flower(3500.0) - bolometric.bc_v_flower(4000.0)) / np.log10(3500 / 4000)
    assert giant.logl_err[2] / giant.logt_err[2] == pytest.approx(abs(slope), rel=0.5)
    assert "M giant" in F.describe(int(giant.flags[2]))
