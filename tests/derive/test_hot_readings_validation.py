"""Blue and faint stars on the photometric paths against outside data: Gentile Fusillo et al. 2021
Gaia EDR3 white dwarfs (G, BP-RP, parallax only), the Pecaut & Mamajek 2013 hot dwarfs, the
Hipparcos bright stars. Measured values are in docs/derive.md."""

import numpy as np
import pytest
from astropy.table import Table

from hrstage import flags as F
from hrstage.classifier import classify_hr
from hrstage.derive import from_gaia, from_johnson

pytestmark = pytest.mark.validation


def test_gaia_white_dwarfs_from_photometry(gaia_white_dwarfs):
    w = gaia_white_dwarfs
    pos = from_gaia(w["Gmag"], w["BPmag"] - w["RPmag"], w["Plx"])
    r = classify_hr(pos.logt, pos.logl, logt_err=pos.logt_err, logl_err=pos.logl_err, corr=pos.corr)
    # issue 13 bar >= 97 % white_dwarf (Gentile Fusillo et al. 2021, 7077 stars); measured 0.9987 (0.996 before
    # the extremely-low-mass part of the band, 0.247 before the white-dwarf reading)
    assert np.mean(r.stage == "white_dwarf") >= 0.97
    # every star has a stage; the low-mass ones (MassH < 0.3 Msun, He cores) are white dwarfs, or hot
    # subdwarfs where they share that region above 20 000 K (measured: 9 stars)
    assert not np.any(r.stage == "unclassified")
    elm = w["MassH"] < 0.3
    assert np.all(np.isin(r.stage[elm], ["white_dwarf", "hot_subdwarf"]))
    assert np.all(pos.teff[elm & (r.stage == "hot_subdwarf")] > 19000)
    da = (w["spectype"] == "DA") & (w["TeffH"] < 40000)
    rel = np.abs(pos.teff[da] / w["TeffH"][da] - 1)
    # issue 13 bar: Teff within 10 % of TeffH for >= 90 % of the DA stars below 40 kK; measured 0.911
    assert np.mean(rel < 0.10) >= 0.90
    # the white-dwarf reading's mass is near the catalogue's MassH (median offset measured -0.01 Msun)
    wd = pos.extra["white_dwarf"]
    rows = wd["rows"]
    ok = da[rows] & np.isfinite(wd["mass"]) & np.isfinite(w["MassH"][rows])
    assert abs(np.median(wd["mass"][ok] - w["MassH"][rows][ok])) < 0.05
    # the radius from L and Teff (Stefan-Boltzmann) near the catalogue's from M and log g (measured median -3 %)
    import astropy.constants as const
    r_cat = np.sqrt(const.G.cgs.value * w["MassH"][rows] * const.M_sun.cgs.value / 10 ** w["loggH"][rows]) \
        / const.R_sun.cgs.value
    assert abs(np.nanmedian(wd["radius"][ok] / r_cat[ok] - 1)) < 0.08


def test_gaia_white_dwarfs_far_held_out(gaia_white_dwarfs):
    # the EDR3 -> DR2-passband offset was fitted on the DA stars within 150 pc; beyond 150 pc (not
    # used in the fit, more reddened, no extinction given) the Teff agreement is measured 0.871
    w = gaia_white_dwarfs
    pos = from_gaia(w["Gmag"], w["BPmag"] - w["RPmag"], w["Plx"])
    far = (w["spectype"] == "DA") & (w["TeffH"] < 40000) & (1000.0 / w["Plx"] >= 150)
    assert far.sum() > 2000
    assert np.mean(np.abs(pos.teff[far] / w["TeffH"][far] - 1) < 0.10) >= 0.85


def test_ambiguous_readings_carry_both(gaia_white_dwarfs):
    # with 15 % parallax errors some stars near the bright edge of the white-dwarf reading fit both
    w = gaia_white_dwarfs
    pos = from_gaia(w["Gmag"], w["BPmag"] - w["RPmag"], w["Plx"], parallax_err=0.15 * w["Plx"], bp_rp_err=0.01)
    two = (pos.flags & F.TWO_READINGS) != 0
    assert two.sum() > 0
    other = pos.extra["other_reading"]
    assert np.array_equal(np.sort(other["rows"]), np.flatnonzero(two))
    assert np.all((other["p"] >= 0.05) & (other["p"] <= 0.5))
    assert np.all(np.isfinite(other["logt"]) & np.isfinite(other["logl_err"]))


def test_pecaut_mamajek_hot_dwarfs_on_main_sequence(dwarf_sequence):
    # O3V-A9V of Pecaut & Mamajek 2013 (v2024.05.15): Gaia path where the table gives Bp-Rp and M_G
    # (B9V-A9V), Johnson path (B-V, M_V) for all; every one lands on the main sequence (measured 1.00)
    d = dwarf_sequence
    hot = np.array([s[0] in "OBA" for s in d["SpT"]])
    g = hot & np.isfinite(d["Bp-Rp"]) & np.isfinite(d["M_G"])
    assert g.sum() >= 12
    r = from_gaia(d["M_G"][g], d["Bp-Rp"][g], 100.0, gaia_release="dr2")
    assert np.all(["Pecaut" in s or "Casagrande" in s for s in r.source])
    assert np.all(classify_hr(r.logt, r.logl).stage == "main_sequence")
    assert np.max(np.abs(r.logl - d["logL"][g])) < 0.05
    j = hot & np.isfinite(d["B-V"]) & np.isfinite(d["Mv"])
    assert j.sum() >= 35
    r = from_johnson(d["Mv"][j], d["B-V"][j], 100.0)
    assert np.all(classify_hr(r.logt, r.logl).stage == "main_sequence")


def test_pecaut_mamajek_o_b8_dwarfs_through_gaia(dwarf_sequence):
    # O3V-B8V of Pecaut & Mamajek 2013 (v2024.05.15) have no Bp-Rp: each is given the colour the O-B8
    # scale assigns to its Teff (so Teff is recovered by construction) and M_G = M_V + (G-V) of the
    # table (its own M_G where given: B5V, B8V). This checks the BC_G chain against the table's log L and
    # the stage: all main sequence, log L within 0.05 dex (measured <= 0.012, B8V through its own M_G).
    from hrstage.models import early_type_gaia as et

    d = dwarf_sequence
    ob = np.array([s[0] in "OB" for s in d["SpT"]]) & ~np.isfinite(d["Bp-Rp"]) & np.isfinite(d["Mv"])
    assert ob.sum() == 24     # O3V ... B8V
    c_grid = np.linspace(et.colour_range()[0], -0.1201, 4000)
    t_grid, _ = et.teff(c_grid)
    colour = np.interp(np.log10(d["Teff"][ob]), np.log10(t_grid[::-1]), c_grid[::-1])
    m_g = np.where(np.isfinite(d["M_G"][ob]), d["M_G"][ob], d["Mv"][ob] + et.g_minus_v(d["Teff"][ob]))
    r = from_gaia(m_g, colour, 100.0, gaia_release="dr2")
    assert np.all(["O-B8" in s for s in r.source])
    assert np.all(r.flags & F.COLOUR_SATURATED)
    assert np.allclose(r.teff, d["Teff"][ob], rtol=2e-3)
    assert np.max(np.abs(r.logl - d["logL"][ob])) < 0.05
    assert np.all(classify_hr(r.logt, r.logl, logt_err=r.logt_err, logl_err=r.logl_err,
                              corr=r.corr).stage == "main_sequence")


def test_no_dwarf_is_a_white_dwarf(dwarf_sequence):
    # the extremely-low-mass part of the white-dwarf band (log g 6 line below 20 000 K) must not take
    # dwarfs: Pecaut & Mamajek 2013 O3V-M9V (v2024.05.15) at their Teff and log L, and the same stars
    # 1.2 dex fainter (the depth of the subdwarf region), none white_dwarf
    d = dwarf_sequence
    ok = np.isfinite(d["Teff"]) & np.isfinite(d["logL"]) & (d["Teff"] >= 2400)
    lt, ll = np.log10(d["Teff"][ok]), d["logL"][ok]
    for shift in (0.0, -1.2):
        st = classify_hr(lt, ll + shift, n_draws=0).stage
        assert not np.any(st == "white_dwarf"), shift


def test_hipparcos_bright_stars_still_classified(bright_stars):
    # Hipparcos bright stars (van Leeuwen 2007; ESA 1997 V, B-V): issue bar >= 99 % classified
    b = bright_stars
    ok = b["plx_mas"] > 0
    r = from_johnson(b["vmag"][ok], b["b_v"][ok], b["plx_mas"][ok], parallax_err=b["e_plx_mas"][ok])
    c = classify_hr(r.logt, r.logl, logt_err=r.logt_err, logl_err=r.logl_err, corr=r.corr)
    assert np.mean(c.stage != "unclassified") >= 0.99


@pytest.mark.parametrize("cols", [("Gmag", "BPmag", "RPmag", "Plx"),
                                  ("Gmag", "BPmag", "RPmag", "rgeo", "b_rgeo", "B_rgeo")])
def test_gaia_white_dwarfs_through_the_engine(validation_file, cols):
    # the catalogue as a user has it (Gentile Fusillo et al. 2021 columns), parallax or the
    # Bailer-Jones et al. 2021 geometric distance with its 16th/84th percentiles: issue 13 bar >= 97 %
    # white_dwarf; measured 0.996 (parallax) and 0.995 (rgeo)
    import hrstage

    t = Table.read(validation_file("gaia_white_dwarfs.csv"), format="ascii.csv")
    out = hrstage.classify(t[list(cols)])
    assert np.mean(out["stage"] == "white_dwarf") >= 0.97
    if "rgeo" in cols:
        assert all("published median" in s for s in out["hr_source"][:100])
