"""The M-giant B-V turnover (hrstage.models.giant_bv_turnover): adopted numbers against their sources.

Sources beside each value: Straizys & Kuriliene 1981 (Ap&SS 80, 353) Teff of M3 III in the project's
class-III calibration table (HRSTAGE_CALIBRATION_DIR); Flower 1996 / Torres 2010 Teff(B-V) check
values of formulae.md section 4.1 [C]; the turnover itself on the Hipparcos bright stars
(HRSTAGE_VALIDATION_DIR, bright_stars_hip.csv: Hipparcos B-V and MK types, ESA 1997).
"""

from __future__ import annotations

import re

import numpy as np
import pytest

from hrstage.models import flower_teff, giant_bv_turnover as gt


def test_peak_is_the_m3_giant_of_the_calibration(calibration_dir):
    from astropy.table import Table

    t = Table.read(calibration_dir / "spt_calib_III.csv", format="ascii.csv")
    sk = [r for r in t if r["spt"] == "M3III" and str(r["source"]).startswith("Straizys")]
    assert len(sk) == 1
    assert gt.TEFF_PEAK == pytest.approx(float(sk[0]["teff_K"]))   # 3650 K, SK81 Table III
    # the late-M reading holds the M4-M6 giants of the same table (3550, 3400, 3250 K)
    for spt in ("M4III", "M5III", "M6III"):
        row = [r for r in t if r["spt"] == spt and str(r["source"]).startswith("Straizys")][0]
        assert gt.LOGT_RANGE[0] < np.log10(float(row["teff_K"])) < gt.LOGT_RANGE[1]


def test_saturation_limit_on_flowers_scale():
    # Flower's giant branch falls monotonically through the saturated colours: 1.5 -> 3983 K
    # (formulae.md 4.1 check value [C]), so B-V = 1.40 is hotter than that and the peak is cooler
    assert 10 ** gt.LOGT_SATURATED > 3983.0
    assert float(flower_teff.teff(1.5)) == pytest.approx(3983.0, abs=1.0)
    assert 10 ** gt.LOGT_SATURATED > gt.TEFF_PEAK
    b = np.array([1.0, 1.15, 1.3, 1.4, 1.6])
    assert gt.has_cool_reading(b).tolist() == [False, True, True, True, True]
    assert gt.is_saturated(b).tolist() == [False, False, False, True, True]


def test_widened_error_only_for_saturated_flagged_rows():
    lt = np.log10([4500.0, 4000.0, 3100.0, 4000.0])
    s = gt.widened_logt_sigma(lt, [True, True, True, False])
    # 4500 K is hotter than Flower's Teff at B-V 1.40: not saturated; 3100 K is cooler than the
    # middle of the late-M reading: nothing to add; 4000 K: half the way to the middle of 3000-3650 K
    mid = 0.5 * (np.log10(3000.0) + np.log10(3650.0))
    assert s[0] == 0.0 and s[2] == 0.0 and s[3] == 0.0
    assert s[1] == pytest.approx(0.5 * (np.log10(4000.0) - mid))


@pytest.mark.validation
def test_turnover_seen_in_hipparcos_giants(validation_file):
    """The physics the module rests on: catalogued B-V of M giants peaks near M1-M3 III and turns
    bluer for later types (not a fit: the module's numbers are not taken from this file)."""
    from astropy.table import Table

    t = Table.read(validation_file("bright_stars_hip.csv"), format="ascii.csv")
    sp = np.asarray(t["sptype"]).astype(str)
    bv = np.asarray(t["b_v"], dtype=float)

    def median_bv(sub):
        m = np.array([bool(re.match(rf"{s}(\.\d)?III", x)) for x in sp for s in [sub]]).reshape(len(sp))
        return np.nanmedian(bv[m]), int(m.sum())

    peak = [median_bv(s) for s in ("M1", "M2", "M3")]
    late = [median_bv(s) for s in ("M5", "M6")]
    assert all(n >= 5 for _, n in peak + late)
    assert min(b for b, _ in peak) > max(b for b, _ in late) + 0.05
    # the late-M giants stay redder than the bluest colour of the turned-back branch
    assert all(b >= gt.BV_TURNOVER_MIN for b, _ in late)
