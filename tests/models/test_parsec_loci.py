"""Tout ZAMS and HPT2000 TAMS against PARSEC isochrones (outside-the-project check).

Source: PARSEC v1.2S isochrones, Z = 0.014 (Bressan A. et al. 2012, MNRAS 427, 127; with
COLIBRI, Marigo P. et al. 2017), as distributed with FSPS (Conroy et al. 2009); file
``parsec_isoc_z0.0140.dat`` of the shared validation data (see its SOURCES.md).

Definitions (ours):

- PARSEC ZAMS point of an initial mass M: interpolate every isochrone's phase-0 points in initial
  mass at M; among the isochrones that contain M in phase 0, take the one where the star has the
  largest log g, i.e. the smallest radius -- where the pre-main-sequence contraction (also labelled
  phase 0 in this file) ends and the main-sequence expansion begins. The minimum of log L is *not*
  used: for M >~ 0.8 Msun the bottom of the Hayashi track is fainter than the ZAMS.
- PARSEC end-of-MS point of an isochrone: the last phase-0 point before the first point of a later
  phase (points ordered by initial mass). Used for turn-off masses 0.9-14 Msun. Above ~15 Msun this
  file's phase 0 runs on across the Hertzsprung gap (its end lies at log Teff 3.6-4.2, far redder
  than any TAMS), so those isochrones are left out.

The fits are compared at [Fe/H] = 0, i.e. Z = 0.02 in the fits' scale (their Z_sun = 0.02); the
numbers for Z = 0.014 are printed too. Tolerances: the Tout and HPT2000 fits describe the Pols et
al. (1998) models, with different opacities, abundances, mixing length and convective overshooting
from PARSEC, so a few hundredths of a dex in log Teff and ~0.1 dex in log L are expected for the
ZAMS; the end of the MS is looser in log L because the extent of overshooting sets the TAMS.
Only the Z = 0.02 comparison is asserted; at Z = 0.014 (the fits evaluated at PARSEC's own Z) the
low-mass TAMS luminosity differs by up to 0.14 dex, so the loose TAMS tolerance would not hold.
Measured (Z = 0.02, fit minus PARSEC): ZAMS 0.5-20 Msun log Teff -0.027..+0.019, log L
-0.072..+0.040; TAMS 0.92-14 Msun log Teff -0.033..+0.024, log L -0.067..+0.073.
"""

from __future__ import annotations

import numpy as np
import pytest

from hrstage.models import hpt2000, tout1996
from hrstage.models.stellar import teff_from_lr

pytestmark = pytest.mark.validation

ZAMS_MASSES = np.array([0.5, 0.6, 0.7, 0.8, 0.9, 1.0, 1.2, 1.5, 2.0, 2.5, 3.0, 4.0, 5.0, 7.0, 10.0, 12.0, 15.0, 20.0])
TAMS_MASS_RANGE = (0.9, 14.0)

# Tolerances (dex): see the module docstring for the reasons.
ZAMS_TOL_LOGT, ZAMS_TOL_LOGL = 0.04, 0.10
TAMS_TOL_LOGT, TAMS_TOL_LOGL = 0.05, 0.12


@pytest.fixture(scope="module")
def parsec(validation_file):
    data = np.loadtxt(validation_file("parsec_isoc_z0.0140.dat"), comments="#")
    assert data.shape[1] == 8
    return {name: data[:, i] for i, name in enumerate("logage mini mact logl logt logg comp phase".split())}


def parsec_zams(p, masses):
    out = np.full((len(masses), 2), np.nan)
    best_g = np.full(len(masses), -np.inf)
    for age in np.unique(p["logage"]):  # 93 isochrones: a loop over grid points, not stars
        sel = (p["logage"] == age) & (p["phase"] == 0)
        mm = p["mini"][sel]
        if mm.size < 2:
            continue
        inside = (masses >= mm.min()) & (masses <= mm.max())
        g = np.interp(masses, mm, p["logg"][sel])
        better = inside & (g > best_g)
        best_g = np.where(better, g, best_g)
        out[better, 0] = np.interp(masses[better], mm, p["logt"][sel])
        out[better, 1] = np.interp(masses[better], mm, p["logl"][sel])
    return out


def parsec_end_of_ms(p):
    rows = []
    for age in np.unique(p["logage"]):
        idx = np.flatnonzero(p["logage"] == age)
        later = np.flatnonzero(p["phase"][idx] >= 1)
        if later.size == 0 or later[0] == 0:
            continue
        k = idx[later[0] - 1]
        if p["phase"][k] == 0 and TAMS_MASS_RANGE[0] <= p["mini"][k] <= TAMS_MASS_RANGE[1]:
            rows.append((p["mini"][k], p["logt"][k], p["logl"][k]))
    return np.array(rows)


def _summary(label, d_logt, d_logl):
    return (
        f"{label}: log Teff median {np.median(d_logt):+.3f}, max |.| {np.max(np.abs(d_logt)):.3f}; "
        f"log L median {np.median(d_logl):+.3f}, max |.| {np.max(np.abs(d_logl)):.3f} (fit - PARSEC, dex)"
    )


def test_tout_zams_matches_parsec_zams(parsec):
    ref = parsec_zams(parsec, ZAMS_MASSES)
    assert np.isfinite(ref).all()
    for z in (0.02, 0.014):
        d_logt = np.log10(tout1996.zams_teff(ZAMS_MASSES, z)) - ref[:, 0]
        d_logl = np.log10(tout1996.zams_luminosity(ZAMS_MASSES, z)) - ref[:, 1]
        print(_summary(f"ZAMS 0.5-20 Msun, Z = {z}", d_logt, d_logl))
        if z == 0.02:  # the comparison that counts: [Fe/H] = 0 in the fits' own scale
            assert np.max(np.abs(d_logt)) < ZAMS_TOL_LOGT
            assert np.max(np.abs(d_logl)) < ZAMS_TOL_LOGL


def test_hpt_tams_matches_parsec_end_of_ms(parsec):
    ref = parsec_end_of_ms(parsec)
    assert len(ref) >= 50  # isochrones with turn-off masses 0.9-14 Msun
    m = ref[:, 0]
    for z in (0.02, 0.014):
        lt, rt = hpt2000.l_tms(m, z), hpt2000.r_tms(m, z)
        d_logt = np.log10(teff_from_lr(lt, rt)) - ref[:, 1]
        d_logl = np.log10(lt) - ref[:, 2]
        print(_summary(f"TAMS {m.min():.2f}-{m.max():.2f} Msun ({len(m)} isochrones), Z = {z}", d_logt, d_logl))
        if z == 0.02:
            assert np.max(np.abs(d_logt)) < TAMS_TOL_LOGT
            assert np.max(np.abs(d_logl)) < TAMS_TOL_LOGL


def test_parsec_zams_definition_is_not_the_pre_ms(parsec):
    # The chosen PARSEC ZAMS point of 1 Msun must be a hydrogen-burning star: cooler than 6000 K
    # and brighter than the bottom of its own Hayashi track (common practice: the Sun's ZAMS
    # luminosity is ~0.7 Lsun, Teff ~5600-5800 K).
    logt, logl = parsec_zams(parsec, np.array([1.0]))[0]
    assert 3.74 < logt < 3.78
    assert -0.2 < logl < -0.05
