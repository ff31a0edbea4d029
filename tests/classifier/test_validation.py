"""Accuracy on real, labelled outside data (HRSTAGE_VALIDATION_DIR); sources named per test."""

import numpy as np
import pytest
from astropy.table import Table

from hrstage.classifier import classify_hr
from hrstage.models import stellar
from isochrone_files import mist_columns, parsec_columns, parsec_split

pytestmark = pytest.mark.validation
GIANT_CLASS = ("giant", "bright_giant", "supergiant")  # bright giants count as giant-class


def _parsec(path):
    age, mini, logl, logt, logg, ph = parsec_columns(path)
    pms, post = parsec_split(mini, logt, logg, age, ph)
    return age, mini, logl, logt, ph, pms, post


def test_parsec_phases(validation_file):
    # PARSEC v1.2S Z = 0.014 (Bressan et al. 2012, MNRAS 427, 127), at [Fe/H] = 0
    age, mini, logl, logt, ph, pms, post = _parsec(validation_file("parsec_isoc_z0.0140.dat"))
    r = classify_hr(logt, logl, feh=0.0)
    ms = (ph == 0) & ~pms & ~post & (mini <= 100)  # > 100 Msun: outside the fits (0.1-100)
    frac_ms = np.mean(r.stage[ms] == "main_sequence")
    assert ms.sum() > 5000
    assert frac_ms >= 0.95, frac_ms  # design bar; measured 0.997
    # phases 2-5; stripped very massive stars (Teff > 100 kK, labelled 1-3) excluded (SOURCES.md)
    ev = (ph >= 2) & (ph <= 5) & ~((logt > 5.0) & (ph <= 3))
    frac_g = np.mean(np.isin(r.stage[ev], GIANT_CLASS))
    assert frac_g >= 0.90, frac_g  # design bar; measured 0.988


def test_mist_metal_poor(validation_file):
    # MIST v1.2, 12 Gyr, [Fe/H] = -1.35 (Choi et al. 2016, ApJ 823, 102; Dotter 2016, ApJS 222, 8)
    c = mist_columns(validation_file("mist_iso_feh-1.35_12gyr.iso.cmd"))
    r = classify_hr(c["log_Teff"], c["log_L"], feh=-1.35)
    ph, lg = c["phase"], c["log_g"]
    assert np.mean(r.stage[ph == 0] == "main_sequence") >= 0.95
    # AGB (phases 4-5): giant-class
    agb = (ph == 4) | (ph == 5)
    assert np.mean(np.isin(r.stage[agb], GIANT_CLASS)) >= 0.95  # measured 1.00
    # the red-giant part of phase 2 (log g < 3.0): giant-class; the subgiant part is reported
    rgb = (ph == 2) & (lg < 3.0)
    assert np.mean(np.isin(r.stage[rgb], GIANT_CLASS)) >= 0.90
    # phase 6 on the white-dwarf cooling track (log g > 7): white dwarfs. The hottest young points
    # (85-100 kK, log g 7.0-7.3) need the hot-white-dwarf widening (wd_hot_tolerance): without it
    # 0.83 (docs/stagemap.md)
    wd = (ph == 6) & (lg > 7.0)
    assert wd.sum() > 100
    assert np.mean(r.stage[wd] == "white_dwarf") >= 0.99  # design bar for white dwarfs; measured 1.00
    # (the low-mass envelope widening, wd_envelope_tolerance, alone places 0.93 of them: switched off
    # here to show what the hot widening does)
    r0 = classify_hr(c["log_Teff"], c["log_L"], feh=-1.35, wd_hot_tolerance=0.0, wd_envelope_tolerance=0.0)
    assert np.mean(r0.stage[wd] == "white_dwarf") < 0.9  # the widening is what places them


def test_mist_phases_2_to_5_giant_share(validation_file):
    # the core-helium-burning band (ZAHB of HPT2000 eq 53) takes the horizontal branch (phase 3)
    c = mist_columns(validation_file("mist_iso_feh-1.35_12gyr.iso.cmd"))
    r = classify_hr(c["log_Teff"], c["log_L"], feh=-1.35)
    ph, lg = c["phase"], c["log_g"]
    ev = (ph >= 2) & (ph <= 5)
    assert np.mean(np.isin(r.stage[ev], GIANT_CLASS)) >= 0.90  # design bar; measured 0.950
    hb = ph == 3
    assert np.mean(np.isin(r.stage[hb], GIANT_CLASS)) >= 0.95  # measured 1.00 (0.20 before the band)
    # phase 2 includes the subgiant branch (log g >= 3.5), not a giant phase: its labels are
    # main sequence (turn-off) or subgiant, reported here rather than scored
    sgb = (ph == 2) & (lg >= 3.5)
    assert np.all(np.isin(r.stage[sgb], ("main_sequence", "subgiant")))  # measured 15 MS, 8 subgiant
    assert np.mean(np.isin(r.stage[ev & ~sgb], GIANT_CLASS)) >= 0.95  # measured 0.973
    # without the band (hb_height = 0) the horizontal branch falls back to subgiant
    r0 = classify_hr(c["log_Teff"], c["log_L"], feh=-1.35, hb_height=0.0)
    assert np.mean(r0.stage[hb] == "subgiant") > 0.5


def test_apokasc3_giants(validation_file):
    # APOKASC-3 Gold alpha-poor (Pinsonneault et al. 2025, ApJS; arXiv:2410.00102):
    # L = R^2 (Teff/5772)^4, per-star [Fe/H]
    t = Table.read(validation_file("apokasc3_gold_apoor_rgb_rc.csv"), format="ascii.csv")
    teff = np.asarray(t["Teff"], float)
    logl = 2 * np.log10(np.asarray(t["Radius"], float)) + 4 * np.log10(teff / 5772.0)
    r = classify_hr(np.log10(teff), logl, feh=np.asarray(t["[Fe/H]"], float))
    g = np.isin(r.stage, GIANT_CLASS)
    assert g.mean() >= 0.97  # design bar; measured 0.9998
    for state in ("RGB", "RC"):
        assert g[np.asarray(t["Evol_State"]) == state].mean() >= 0.97


def test_gaia_white_dwarfs(validation_file):
    # Gaia EDR3 white dwarfs (Gentile Fusillo et al. 2021, MNRAS 508, 3877): L from TeffH, loggH
    # and MassH (R^2 = G M / g)
    t = Table.read(validation_file("gaia_white_dwarfs.csv"), format="ascii.csv")
    teff = np.asarray(t["TeffH"], float)
    logl = stellar.logl_from_teff_logg_mass(teff, np.asarray(t["loggH"], float), np.asarray(t["MassH"], float))
    ok = np.isfinite(logl) & (teff > 0)
    r = classify_hr(np.log10(teff[ok]), logl[ok])
    assert ok.sum() > 7000
    assert np.mean(r.stage == "white_dwarf") >= 0.99  # design bar; measured 0.993


def test_pecaut_mamajek_dwarfs(validation_file):
    # Pecaut & Mamajek 2013 (ApJS 208, 9), table version 2024.05.15: rows B0V..M5V are dwarfs
    lines = validation_file("mamajek_dwarf_sequence.txt").read_text().splitlines()
    heads = [i for i, line in enumerate(lines) if line.startswith("#SpT")]
    assert len(heads) >= 2
    cols = lines[heads[0]][1:].split()
    it, il = cols.index("logT"), cols.index("logL")
    rows = {}
    for line in lines[heads[0] + 1 : heads[1]]:
        f = line.split()
        if len(f) > il and not f[il].startswith("..."):
            rows[f[0]] = (float(f[it]), float(f[il]))
    names = list(rows)
    sel = names[names.index("B0V") : names.index("M5V") + 1]
    assert len(sel) > 60
    lt = np.array([rows[n][0] for n in sel])
    ll = np.array([rows[n][1] for n in sel])
    r = classify_hr(lt, ll, feh=0.0)
    wrong = [n for n, s in zip(sel, r.stage) if s != "main_sequence"]
    assert not wrong
