"""Hot and compact stars off the main sequence: no holes in the HR plane (issue 13, item 3).

Bare stellar cores left of the main sequence (post-AGB stars / central stars of planetary nebulae,
post-EHB sdO stars), stripped massive stars (Wolf-Rayet), and compact stars at 6000-7500 K between the
subdwarf region and the white-dwarf band (sdA / pre-extremely-low-mass white dwarfs). Sources beside
each check value.
"""

import numpy as np
import pytest

from hrstage.classifier import classify_hr
from hrstage.stagemap import stage_map
from isochrone_files import mist_columns

MIST = "mist_iso_feh-1.35_12gyr.iso.cmd"
LOG_G_SUN = 4.438   # IAU 2015 nominal Sun (Prsa et al. 2016): GM_sun / R_sun^2 in cgs
T_SUN = 5772.0      # IAU 2015 nominal solar Teff


def test_post_agb_luminosity_limits_from_the_core_mass_relation():
    # HPT2000 eq 37 (L = min(B Mc^3, D Mc^6), B = 3e4 for these masses, log D = 5.37 + 0.135 zeta):
    # worked by hand. 1.0 Msun CO core: L = 3e4 Lsun at any Z; 0.53 Msun at Z = 0.02: 3e4 x 0.53^3
    # = 4466 Lsun (the D branch, 10^5.37 x 0.53^6 = 5197 Lsun, is brighter)
    sm = stage_map(0.0)
    assert sm.logl_post_agb_max == pytest.approx(np.log10(3.0e4), abs=1e-6)
    assert sm.logl_post_agb_min == pytest.approx(np.log10(3.0e4 * 0.53**3), abs=1e-6)
    # at [Fe/H] = -1.35 (Z = 8.93e-4, zeta = -1.35) the D branch is fainter: 10^5.188 x 0.53^6
    sm = stage_map(-1.35)
    assert sm.logl_post_agb_min == pytest.approx(5.37 - 0.135 * 1.35 + 6 * np.log10(0.53), abs=2e-3)


def test_central_stars_and_hot_post_agb_stars_are_bare_cores():
    # central stars of planetary nebulae: log L ~2.5-4.2 at 30-200 kK on the post-AGB tracks of
    # Miller Bertolami 2016 (A&A 588, A25; ranges from memory, as quoted in the issue)
    t = np.array([50e3, 80e3, 100e3, 150e3, 60e3])
    l = np.array([3.8, 3.9, 3.7, 3.3, 4.2])
    r = classify_hr(np.log10(t), l, feh=0.0)
    assert (r.stage == "hot_subdwarf").all(), r.stage
    assert all("post-AGB" in s and "indicative" in s for s in r.reason)
    assert np.isnan(r.mass).all()
    # fading at the knee of the tracks (R 0.026-0.046 Rsun) they reach the hot-white-dwarf widening of
    # the white-dwarf band: a stage either way, never unclassified
    r = classify_hr(np.log10([190e3, 120e3, 150e3]), [2.9, 2.6, 2.5], feh=0.0)
    assert np.isin(r.stage, ("hot_subdwarf", "white_dwarf")).all(), r.stage
    # below the bare cores the white-dwarf band stays: 100 kK at log L 1.0 has R = sqrt(L) (T_sun / T)^2
    # = 0.0105 Rsun, the radius of a ~0.6 Msun white dwarf (HPT2000 eq 91)
    assert classify_hr([5.0], [1.0], feh=0.0).stage[0] == "white_dwarf"


def test_wolf_rayet_stars_are_stripped_supergiants():
    # Galactic WN / WC stars: log L 4.9-6.3, T* 35-150 kK (Hamann, Graefener & Liermann 2006, A&A 457,
    # 1015; Sander, Hamann & Todt 2012, A&A 540, A144; ranges from memory)
    t = np.array([50e3, 80e3, 112e3, 141e3, 89e3])
    l = np.array([5.9, 5.5, 5.3, 5.0, 6.2])
    r = classify_hr(np.log10(t), l, feh=0.0)
    assert (r.stage == "supergiant").all(), r.stage
    assert all("Wolf-Rayet" in s for s in r.reason)
    assert np.isnan(r.mass).all()
    # an O3 V star (Pecaut & Mamajek 2013 table: 44 900 K, log L 5.8) stays on the main sequence
    r = classify_hr([np.log10(44900.0)], [5.8], feh=0.0)
    assert r.stage[0] == "main_sequence" and "Wolf-Rayet" not in r.reason[0]


def test_no_unclassified_cell_left_of_the_main_sequence():
    # every cell hotter than the main-sequence lower edge and above the white-dwarf band, up to the
    # top of the map, has a stage, at both ends of the supported metallicities (common practice:
    # the grid is ours)
    for feh in (-2.0, 0.0, 0.4):
        sm = stage_map(feh)
        lt = np.linspace(np.log10(20500.0), 5.29, 50)
        for x in lt:
            lo = float(sm.wd_edge(x, "upper"))
            ll = np.linspace(lo + 0.05, 6.9, 60)
            st = classify_hr(np.full_like(ll, x), ll, feh=feh).stage
            assert not np.any(st == "unclassified"), (feh, x, ll[st == "unclassified"])


def test_mist_metal_poor_populated_cells_have_a_stage(validation_file):
    # MIST v1.2 [Fe/H] = -1.35, 12 Gyr (Choi et al. 2016, ApJ 823, 102): cells of 0.01 dex in log Teff x
    # 0.05 dex in log L holding a point of any phase with log Teff < 4.7, except the white-dwarf cooling
    # track (phase 6 with log g > 7), classified at the cell centre at [Fe/H] = -1.35: 5 of 330 were
    # unclassified (the post-AGB crossing at 45-50 kK), now none
    c = mist_columns(validation_file(MIST))
    t, l, ph, g = c["log_Teff"], c["log_L"], c["phase"], c["log_g"]
    m = (t < 4.7) & ~((ph == 6) & (g > 7))
    cells = np.unique(np.stack([np.floor(t[m] / 0.01), np.floor(l[m] / 0.05)], 1), axis=0)
    assert len(cells) == 330
    r = classify_hr((cells[:, 0] + 0.5) * 0.01, (cells[:, 1] + 0.5) * 0.05, feh=-1.35)
    assert not np.any(r.stage == "unclassified")
    # and every MIST post-AGB point hotter than the hot-subdwarf box and above the white-dwarf band is a
    # bare core (hot subdwarf), none unclassified
    sm = stage_map(-1.35)
    hot = (ph == 6) & (g < 7) & (t > np.log10(45000.0)) & (l > sm.wd_edge(t, "upper"))
    assert hot.sum() > 20
    r = classify_hr(t[hot], l[hot], feh=-1.35)
    assert (r.stage == "hot_subdwarf").all(), np.unique(r.stage)
    assert all("post-AGB" in s for s in r.reason)


def test_pre_elm_and_sda_stars_at_6000_to_7500_k():
    # sdA stars: H-rich, log g 5.5-6.5 below 20 000 K (Kepler et al. 2016, MNRAS 455, 3413, as quoted
    # by Hermes, Gaensicke & Breedt 2017, ASP Conf. Ser. 509, 453); (pre-)ELM white dwarfs of 0.15-0.3
    # Msun among them (Pelisoli et al. 2019, MNRAS 482, 3831). L = M (g_sun / g) (T / T_sun)^4.
    t = np.array([6000.0, 6300.0, 6700.0, 7000.0, 7400.0])
    for m, logg in ((0.2, 5.5), (0.2, 6.0), (0.3, 5.7), (0.15, 5.2)):
        logl = np.log10(m) + LOG_G_SUN - logg + 4 * np.log10(t / T_SUN)
        st = classify_hr(np.log10(t), logl, feh=0.0).stage
        assert np.all(np.isin(st, ("subdwarf", "white_dwarf"))), (m, logg, st)
    # the whole gap between the white-dwarf band and the main sequence is closed from 6000 K up
    for feh in (-1.35, 0.0):
        sm = stage_map(feh)
        for x in np.linspace(np.log10(6010.0), np.log10(7590.0), 20):
            ll = np.linspace(float(sm.wd_edge(x, "lower")) + 0.02, float(sm.ms_lower_at(x)) - 0.02, 40)
            st = classify_hr(np.full_like(ll, x), ll, feh=feh).stage
            assert not np.any(st == "unclassified"), (feh, x, ll[st == "unclassified"])


def test_metal_poor_dwarfs_stay_on_the_main_sequence(validation_file):
    # MIST [Fe/H] = -1.35 main-sequence points (phase 0) at 6000-7500 K are not moved into the subdwarf
    # region (Choi et al. 2016)
    c = mist_columns(validation_file(MIST))
    t, l, ph = c["log_Teff"], c["log_L"], c["phase"]
    sel = (ph == 0) & (t > np.log10(6000.0)) & (t < np.log10(7500.0))
    assert sel.sum() > 10
    assert (classify_hr(t[sel], l[sel], feh=-1.35).stage == "main_sequence").all()


def _position(teff, logg, mass):
    # L = M (g_sun / g) (T / T_sun)^4 (Stefan-Boltzmann with R^2 = G M / g; IAU 2015 nominal Sun)
    teff = np.asarray(teff, float)
    return np.log10(teff), np.log10(mass) + LOG_G_SUN - np.asarray(logg, float) + 4 * np.log10(teff / T_SUN)


def test_metal_poor_blue_horizontal_branch_or_main_sequence():
    # blue horizontal-branch stars: ~0.6 Msun, log g 3.5-3.8 at 9500-12000 K (the halo BHB samples,
    # e.g. Xue et al. 2008, ApJ 684, 1143, select log g < 3.75 there; values from memory); A-type
    # main-sequence stars / blue stragglers of 2.0-2.4 Msun at log g 4.1-4.2 (common practice). On
    # (Teff, L) alone they share positions on a metal-poor map: both probabilities and a flag.
    from astropy.table import Table

    import hrstage
    from hrstage import flags as F

    teff = np.array([10000.0, 10500.0, 11000.0, 10000.0, 10500.0, 11000.0])
    logg = np.array([3.60, 3.70, 3.80, 4.20, 4.15, 4.10])
    mass = np.array([0.6, 0.6, 0.6, 2.3, 2.2, 2.0])
    lt, ll = _position(teff, logg, mass)
    r = classify_hr(lt, ll, feh=-1.6)
    assert ((r.flags & F.HB_OR_MAIN_SEQUENCE) != 0).all(), r.flags
    assert (r.stage == "main_sequence").all()
    assert np.allclose(r.proba[:, 2], 0.4) and np.allclose(r.proba[:, 0], 0.6)   # hb_share = 0.4
    assert all("blue horizontal branch or main sequence" in s for s in r.reason)
    # a larger share (a halo BHB target list) labels them giant (horizontal branch) with the ZAHB mass
    r2 = classify_hr(lt, ll, feh=-1.6, hb_share=0.8)
    assert (r2.stage == "giant").all() and (r2.mass < 0.9).all()
    # at solar metallicity the overlap is not reported (no blue horizontal branch there)
    assert not (classify_hr(lt, ll, feh=0.0).flags & F.HB_OR_MAIN_SEQUENCE).any()
    # with log g and an independent L the gravity-radius mass separates them (Kiel route)
    t = hrstage.classify(Table({"teff": teff, "lum": 10.0**ll, "logg": logg, "feh": np.full(6, -1.6)}))
    st = np.asarray(t["stage"]).astype(str)
    assert list(st) == ["giant"] * 3 + ["main_sequence"] * 3, st
    assert (np.asarray(t["branch"]).astype(str)[:3] == "horizontal_branch").all()
    assert (np.asarray(t["prob_giant"])[:3] > 0.95).all() and (np.asarray(t["prob_giant"])[3:] < 0.05).all()
