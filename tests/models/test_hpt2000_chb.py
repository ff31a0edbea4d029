"""HPT2000 core-helium burning (zero-age horizontal branch): check values with their sources."""

import numpy as np
import pytest

from hrstage.models import hpt2000 as hpt
from hrstage.models.stellar import teff_from_lr


def test_core_mass_at_the_helium_flash():
    # formulae.md §2.6 [C]: Mc(L_HeI) = 0.477 Msun (1 Msun, Z = 0.02), 0.495 Msun (Z = 0.001)
    assert float(hpt.mc_hei(1.0, 0.02)) == pytest.approx(0.477, abs=5e-4)
    assert float(hpt.mc_hei(1.0, 0.001)) == pytest.approx(0.495, abs=5e-4)
    # no helium flash above M_HeF (formulae.md §2.1: M_HeF = 1.995 at Z = 0.02)
    assert np.isnan(hpt.mc_hei(2.5, 0.02))
    assert np.isnan(hpt.mc_hei(0.05, 0.02))


def test_helium_star_zams_written_forms():
    # HPT2000 eqs 77-78 evaluated by hand at M = 1 (all powers of 1 are 1):
    # L = 15262 / (1 + 29.54 + 31.18 + 0.0469), R = 0.2391 / (1 + 0.162 + 0.0065)
    assert float(hpt.l_zhe(1.0)) == pytest.approx(15262 / 61.7669, rel=1e-12)
    assert float(hpt.r_zhe(1.0)) == pytest.approx(0.2391 / 1.1685, rel=1e-12)
    # a 0.47-0.50 Msun helium star sits where hot subdwarfs (sdB/sdO) are observed:
    # Teff ~ 30-40 kK, log g ~ 5.5-6 (Heber 2016, PASP 128, 082001; values from memory)
    l, r = hpt.l_zhe(0.48), hpt.r_zhe(0.48)
    t = float(teff_from_lr(l, r))
    logg = 4.438 + np.log10(0.48) - 2 * np.log10(float(r))  # log g_sun = 4.438 (IAU 2015 B3 nominal)
    assert 28000 < t < 42000
    assert 5.5 < logg < 6.3
    assert np.isnan(hpt.l_zhe(0.0)) and np.isnan(hpt.r_zhe(-1.0))


@pytest.mark.parametrize("z", [0.02, 0.001, 1e-4])
def test_zahb_continuity_built_into_eq_53(z):
    # HPT2000 eq 53 is constructed to tend to the helium-star ZAMS (eqs 77-78) as the envelope
    # vanishes, and to L_minHe (eq 51) at M = M_HeF (alpha2 is defined for that)
    mc = float(hpt.mc_hei(1.0, z))
    m_hef = float(hpt.critical_masses(z)[1])
    assert float(hpt.l_zahb(mc * (1 + 1e-9), mc, z)) == pytest.approx(float(hpt.l_zhe(mc)), rel=1e-6)
    assert float(hpt.r_zahb(mc * (1 + 1e-9), mc, z)) == pytest.approx(float(hpt.r_zhe(mc)), rel=1e-6)
    assert float(hpt.l_zahb(m_hef, mc, z)) == pytest.approx(float(hpt.l_minhe(m_hef, z)), rel=1e-9)
    # outside the range: NaN
    assert np.isnan(hpt.l_zahb(m_hef + 0.1, mc, z))
    assert np.isnan(hpt.l_zahb(mc * 0.9, mc, z))


def test_zahb_rises_and_reddens_with_envelope_mass():
    # qualitative HB morphology (common practice): more envelope -> cooler and brighter ZAHB
    z = 0.001
    mc = float(hpt.mc_hei(0.9, z))
    m = mc + np.geomspace(1e-3, 1.0, 60) * (0.9 - mc)
    l, r = hpt.l_zahb(m, mc, z), hpt.r_zahb(m, mc, z)
    t = teff_from_lr(l, r)
    assert np.all(np.diff(l) > 0)
    assert np.all(np.diff(t) < 0)


def test_zahb_luminosity_of_metal_poor_red_hb():
    # Metal-poor horizontal branch at M_V ~ +0.5-0.6 ([Fe/H] ~ -1.5), i.e. log L ~ 1.6-1.8 with
    # BC_V ~ 0 near 6000-7000 K (common practice; RR Lyrae M_V-[Fe/H] calibrations, from memory)
    z = 0.02 * 10**-1.35
    mc = float(hpt.mc_hei(0.85, z))
    logl = np.log10(float(hpt.l_zahb(0.75, mc, z)))
    assert 1.6 < logl < 1.9


@pytest.mark.validation
def test_zahb_against_mist_core_helium_burning(validation_file):
    # MIST v1.2 12 Gyr [Fe/H] = -1.35 (Choi et al. 2016, ApJ 823, 102; Dotter 2016, ApJS 222, 8):
    # the faintest core-He-burning points (phase 3) are its ZAHB; HPT2000 eq 53 at the same current
    # mass and the flash core mass of a star of that initial mass agrees within 0.1 dex
    path = validation_file("mist_iso_feh-1.35_12gyr.iso.cmd")
    with open(path) as fh:
        header = [line for line in fh if line.startswith("#") and "EEP" in line and "log_Teff" in line]
    cols = header[-1][1:].split()
    d = np.loadtxt(path, comments="#")
    c = {n: d[:, i] for i, n in enumerate(cols)}
    hb = c["phase"] == 3
    m_now = float(np.median(c["star_mass"][hb]))
    m_init = float(np.median(c["initial_mass"][hb]))
    z = 0.02 * 10**-1.35
    mc = float(hpt.mc_hei(m_init, z))
    logl = np.log10(float(hpt.l_zahb(m_now, mc, z)))
    assert logl == pytest.approx(float(c["log_L"][hb].min()), abs=0.1)


def test_helium_star_lifetime_eq_79():
    # HPT2000 eq 79 evaluated by hand at M = 1: (0.4129 + 18.81 + 1.853) / 1 Myr; the same form in
    # the COMPAS code (HeMS lifetime, citing eq 79) [V-code]
    assert float(hpt.t_hems(1.0)) == pytest.approx(0.4129 + 18.81 + 1.853, rel=1e-12)
    # the 0.45-0.5 Msun cores of the helium flash live 1-2e8 yr as helium stars (from memory,
    # the ~1e8 yr core-He-burning time of horizontal-branch stars is of this order)
    assert 100.0 < float(hpt.t_hems(0.5)) < 220.0
    assert np.isnan(hpt.t_hems(0.0))


@pytest.mark.parametrize("z", [0.02, 0.001])
def test_core_helium_lifetime_eq_57(z):
    c = hpt.coefficients(z)
    b39, b40 = float(c.b[39]), float(c.b[40])
    # Appendix row b39 (formulae.md §2.10): 131.4955 + 20.09258 zeta - 0.5143082 zeta^2 - 1.37914 zeta^3
    zeta = np.log10(z / 0.02)
    assert b39 == pytest.approx(131.4955 + 20.09258 * zeta - 0.5143082 * zeta**2 - 1.37914 * zeta**3)
    # low masses: mu = M / M_HeF small enough that (1 - mu)^b40 vanishes -> t_He -> b39 (eq 57)
    assert b40 >= 1.0   # special case b40 = max(b40, 1) (formulae.md §2.2)
    assert float(hpt.t_he(0.8, z)) == pytest.approx(b39, rel=0.01)
    # alpha4 makes eq 57 continuous at M_HeF (HPT2000, just after eq 57)
    m_hef = float(c.m_hef)
    assert float(hpt.t_he(m_hef * (1 - 1e-7), z)) == pytest.approx(float(hpt.t_he(m_hef, z)), rel=1e-4)
    # above M_HeF: a fraction of t_BGB (eq 57 second form), falling with mass
    t = hpt.t_he(np.array([2.5, 4.0, 6.0]), z)
    assert np.all(np.diff(t) < 0) and np.all(t < hpt.t_bgb(np.array([2.5, 4.0, 6.0]), z))
    assert np.isnan(hpt.t_he(0.05, z)) and np.isnan(hpt.t_he(float(c.m_fgb) * 1.01, z))
