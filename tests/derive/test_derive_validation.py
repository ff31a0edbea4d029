"""The derive paths against real data (HRSTAGE_VALIDATION_DIR): the Pecaut & Mamajek dwarf sequence,
the Gaia EDR3 white dwarfs and the Hipparcos bright stars. Tolerances are ours; the measured
median/max offsets are recorded in docs/derive.md."""

import re

import numpy as np
import pytest
from astropy import constants as const

from hrstage import flags as F
from hrstage.derive import from_gaia, from_johnson
from hrstage.models import bolometric, casagrande2010, casagrande2021, flower_teff, riello2021

pytestmark = pytest.mark.validation


def _stats(x):
    x = x[np.isfinite(x)]
    return len(x), float(np.median(x)), float(np.max(np.abs(x)))


def test_parser_reads_the_whole_table(dwarf_sequence):
    d = dwarf_sequence
    # Pecaut & Mamajek v2024.05.15: 118 rows, O3V ... Y4V (SOURCES.md)
    assert len(d["SpT"]) == 118 and d["SpT"][0] == "O3V" and d["SpT"][-1] == "Y4V"
    i = list(d["SpT"]).index("G2V")
    assert d["Teff"][i] == 5770 and d["Mv"][i] == 4.80 and d["B-V"][i] == 0.650
    assert np.isnan(d["Bp-Rp"][0])         # '...' -> NaN


def test_teff_from_b_v_casagrande2010(dwarf_sequence):
    # Pecaut & Mamajek 2013 Teff vs Casagrande et al. 2010 (B-V) inside 0.18-1.29 (scatter 73 K)
    d = dwarf_sequence
    m = (d["B-V"] >= 0.18) & (d["B-V"] <= 1.29)
    n, med, mx = _stats(casagrande2010.teff(d["B-V"][m]) - d["Teff"][m])
    assert n >= 30 and abs(med) < 50 and mx < 300          # measured: 32 rows, -13 K, 247 K


def test_teff_from_v_ks_casagrande2010(dwarf_sequence):
    d = dwarf_sequence
    m = (d["V-Ks"] >= 0.78) & (d["V-Ks"] <= 3.15)
    n, med, mx = _stats(casagrande2010.teff(d["V-Ks"][m], which="V-Ks") - d["Teff"][m])
    assert n >= 25 and abs(med) < 30 and mx < 110          # measured: 27 rows, -2 K, 90 K (sigma 25 K)


def test_teff_from_bp_rp_casagrande2021(dwarf_sequence):
    # the table's Bp-Rp are Gaia DR2 colours -> DR2 coefficient set; log g from its M and R
    d = dwarf_sequence
    logg = 4.438 + np.log10(d["Msun"]) - 2 * np.log10(d["R_Rsun"])   # log g_sun 4.438 (IAU 2015 B3)
    n, med, mx = _stats(casagrande2021.teff(d["Bp-Rp"], logg, 0.0, release="dr2") - d["Teff"])
    assert n >= 35 and abs(med) < 60 and mx < 250          # measured: 37 rows, +42 K, 206 K


def test_teff_from_b_v_flower(dwarf_sequence):
    # Flower's B-V scale for dwarfs 4000-10000 K (B-V still tracks Teff there)
    d = dwarf_sequence
    m = (d["Teff"] >= 4000) & (d["Teff"] <= 10000)
    n, med, mx = _stats((flower_teff.teff(d["B-V"][m]) - d["Teff"][m]) / d["Teff"][m])
    assert n >= 35 and abs(med) < 0.02 and mx < 0.06          # 39 rows


def test_logl_from_m_v_and_bc_v(dwarf_sequence):
    # log L from M_V + BC_V(Flower, at the table's Teff) - 4.73 vs the table's log L, 4000-30000 K
    d = dwarf_sequence
    m = (d["Teff"] >= 4000) & (d["Teff"] <= 30000)
    logl = bolometric.logl_from_mbol(d["Mv"][m] + bolometric.bc_v_flower(d["Teff"][m]), bolometric.FLOWER_MBOL_SUN)
    n, med, mx = _stats(logl - d["logL"][m])
    assert n >= 50 and abs(med) < 0.02 and mx < 0.05       # measured (4000-10000 K): -0.009, 0.033 dex


def test_bc_v_against_table_column(dwarf_sequence):
    d = dwarf_sequence
    m = (d["Teff"] >= 4000) & (d["Teff"] <= 30000)
    n, med, mx = _stats(bolometric.bc_v_flower(d["Teff"][m]) - d["BCv"][m])
    assert n >= 50 and abs(med) < 0.03 and mx < 0.15


def test_logl_from_m_g_and_bc_g(dwarf_sequence):
    d = dwarf_sequence
    logl = bolometric.logl_from_mbol(d["M_G"] + bolometric.bc_g_andrae(d["Teff"]), bolometric.IAU_MBOL_SUN)
    n, med, mx = _stats(logl - d["logL"])
    assert n >= 40 and abs(med) < 0.02 and mx < 0.07       # measured: 42 rows, +0.009, 0.062 dex


def test_riello_g_minus_v_against_table(dwarf_sequence):
    d = dwarf_sequence
    m = (d["Bp-Rp"] > 0) & (d["Bp-Rp"] < 3)
    n, med, mx = _stats(riello2021.g_minus_v(d["Bp-Rp"][m]) - d["G-V"][m])
    assert n >= 40 and abs(med) < 0.05 and mx < 0.12


def test_full_johnson_path_on_dwarf_sequence(dwarf_sequence):
    # V = M_V at 10 pc, observed B-V and V-Ks; -0.2 <= B-V <= 1.3 (inside the relations' validity)
    d = dwarf_sequence
    m = (d["B-V"] >= -0.2) & (d["B-V"] <= 1.3)
    r = from_johnson(d["Mv"][m], d["B-V"][m], 100.0, v_ks=d["V-Ks"][m])
    n, med, mx = _stats(r.logl - d["logL"][m])
    assert n >= 45 and abs(med) < 0.03 and mx < 0.15       # O/B stars: B-V saturates, largest offsets
    n, med, mx = _stats((r.teff - d["Teff"][m]) / d["Teff"][m])
    assert abs(med) < 0.02 and mx < 0.13
    fgk = (d["Teff"][m] >= 4000) & (d["Teff"][m] <= 7500)
    n, med, mx = _stats(r.logl[fgk] - d["logL"][m][fgk])
    assert n >= 25 and mx < 0.05                         # 29 rows


def test_full_gaia_path_on_dwarf_sequence(dwarf_sequence):
    d = dwarf_sequence
    r = from_gaia(d["M_G"], d["Bp-Rp"], 100.0, gaia_release="dr2")
    n, med, mx = _stats(r.logl - d["logL"])
    assert n >= 35 and abs(med) < 0.02 and mx < 0.06       # measured: 37 rows, +0.009, 0.044 dex
    n, med, mx = _stats(r.teff - d["Teff"])
    assert abs(med) < 60 and mx < 250                      # measured: +37 K, 171 K
    cool = np.isfinite(r.logl) & (d["Bp-Rp"] >= 0.2)      # the Casagrande 2021 rows (bluer: the hot-star reading)
    assert np.all(r.extra["logg_used"][cool] > 3.2)        # every dwarf lands on the dwarf branch


def _wd_reference_logl(w):
    # L = R^2 (T/5772)^4 with R^2 = G M / g from the catalogue's MassH and loggH (Gentile Fusillo+2021)
    r2 = const.G.cgs.value * w["MassH"] * const.M_sun.cgs.value / 10 ** w["loggH"]
    return np.log10(r2 / const.R_sun.cgs.value ** 2) + 4 * np.log10(w["TeffH"] / 5772.0)


def test_gaia_white_dwarfs(gaia_white_dwarfs):
    w = gaia_white_dwarfs
    m_g = w["Gmag"] + 5 * np.log10(w["Plx"]) - 10
    sel = (m_g >= 9) & (m_g <= 14) & np.isfinite(w["TeffH"])
    r = from_gaia(w["Gmag"][sel], (w["BPmag"] - w["RPmag"])[sel], w["Plx"][sel], teff=w["TeffH"][sel])
    ref = _wd_reference_logl({k: v[sel] for k, v in w.items() if k != "spectype"})
    dl = r.logl - ref
    ok = np.isfinite(dl)
    assert ok.mean() > 0.99
    # white-dwarf luminosities: 1e-4 .. 0.1 Lsun (Gentile Fusillo et al. 2021 sample, M_G 9-14)
    assert np.percentile(r.logl[ok], 1) > -4.2 and np.percentile(r.logl[ok], 99) < -0.5
    # agreement: measured median -0.075 dex (photometric L below the model R^2 T^4), 90 % within 0.12
    assert abs(np.median(dl[ok])) < 0.1
    assert np.percentile(np.abs(dl[ok]), 90) < 0.15
    # most are hotter than 8000 K: the BC fallback (Flower BC_V - Riello G-V) carries them
    assert np.mean((r.flags & F.BC_FALLBACK) != 0) > 0.5


def test_bright_star_giants(bright_stars):
    b = bright_stars
    with np.errstate(divide="ignore", invalid="ignore"):
        good = (b["plx_mas"] > 0) & (b["e_plx_mas"] / b["plx_mas"] < 0.1)
    giant = np.array([bool(re.match(r"^[GKM]\d(\.\d)?III$", s.strip())) for s in b["sptype"]])
    m = good & giant
    r = from_johnson(b["vmag"][m], b["b_v"][m], b["plx_mas"][m], parallax_err=b["e_plx_mas"][m])
    assert m.sum() > 1000
    frac = np.mean((r.logl >= 1) & (r.logl <= 3))       # G/K/M giants: log L ~1-3 (common practice)
    assert frac > 0.85                                     # measured: 92 % of 1237 G/K/M III stars
    assert np.all((r.flags & F.LOW_PARALLAX_SNR) == 0)    # e_plx/plx < 0.1 means S/N > 10
    assert np.mean(["Flower" in s for s in r.source]) > 0.95   # giants leave Casagrande 2010 alone
