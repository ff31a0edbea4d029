"""The MK-type check on real catalogue types: the Hipparcos bright stars.

Data: ``bright_stars_hip.csv`` in HRSTAGE_VALIDATION_DIR — Hipparcos new-reduction parallaxes
(van Leeuwen 2007) with Hipparcos (ESA 1997) V, B-V and SpType (field H76) for the stars of the
Yale Bright Star Catalogue (Hoffleit & Warren 1991). HR positions come from
``hrstage.derive.from_johnson`` (no extinction: these are nearby stars, negligible for most;
B-V error 0.02 mag and V error 0.01 mag stand for photometric error plus unknown reddening —
our choice, from memory of typical Hipparcos photometry). Only stars with e_plx/plx < 0.1 are used.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest

from hrstage import flags
from hrstage.sptype import check_types, class_separation, parse_many, summarise_checks

pytestmark = pytest.mark.validation


@pytest.fixture(scope="module")
def stars(validation_file):
    from astropy.table import Table

    derive = pytest.importorskip("hrstage.derive", reason="layer 5 (derive) not available")
    t = Table.read(validation_file("bright_stars_hip.csv"), format="ascii.csv")
    plx = np.asarray(t["plx_mas"], dtype=float)
    eplx = np.asarray(t["e_plx_mas"], dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        good = (plx > 0) & (eplx / plx < 0.1)
    t = t[good]
    pos = derive.from_johnson(
        np.asarray(t["vmag"], dtype=float), np.asarray(t["b_v"], dtype=float), np.asarray(t["plx_mas"], dtype=float),
        parallax_err=np.asarray(t["e_plx_mas"], dtype=float), v_err=0.01, b_v_err=0.02,
    )
    types = parse_many(np.asarray(t["sptype"]).astype(str))
    chk = check_types(types, pos.logt, pos.logl, logt_err=pos.logt_err, logl_err=pos.logl_err, hr_flags=pos.flags)
    return t, pos, types, chk


def test_sample_size(stars):
    t, pos, types, chk = stars
    # SOURCES.md: 5,112 stars; about 4,300 have parallaxes better than 10 %
    assert 4000 < len(t) < 4600
    assert np.isfinite(pos.logl).mean() > 0.99


def test_conflict_rate_per_class(stars):
    t, pos, types, chk = stars
    s = summarise_checks(chk, by="main")
    print()
    s.pprint(max_lines=-1, max_width=-1)
    rows = {r["lumclass"]: r for r in s}
    # regression bounds on the measured rates (see docs/sptype.md for the numbers); a rise means
    # the check started to reject well-measured catalogue types
    assert rows["V"]["conflict_rate"] < 0.12
    assert rows["III"]["conflict_rate"] < 0.08
    assert rows["(all)"]["conflict_rate"] < 0.12
    # the giants and dwarfs are almost all checkable
    assert rows["III"]["not_checkable"] <= 2 and rows["V"]["not_checkable"] <= 2
    # K IV beyond SK81's K1 get the stage check as a second opinion: none is a stage conflict
    # (they sit in the giant or subgiant region), and the HR stage is named in the reason
    kiv = (chk.lumclass == "IV") & (chk.verdict == "not_checkable:outside_calibration")
    assert kiv.sum() >= 10 and all(chk.hr_stage[kiv] != "")
    # no class given: tested against every class (R14), never silently "consistent" - except a
    # family the stage check places (a carbon or S star without class on the giant branch)
    kinds = np.array([p.kind for p in types])
    none_ok = (chk.lumclass == "") & (chk.verdict == "consistent")
    assert np.isin(kinds[none_ok], ["carbon", "s_type", "white_dwarf", "wolf_rayet"]).all()
    assert rows["(none)"]["not_checkable"] > 0.8 * rows["(none)"]["n"]


def test_known_bad_entry_is_a_conflict(stars):
    # HIP 24608 is typed "M1: comp" but its B-V of 0.795 is far from an M1 star (SOURCES.md)
    t, pos, types, chk = stars
    i = np.flatnonzero(np.asarray(t["hip"]) == 24608)
    assert len(i) == 1
    assert chk.verdict[i[0]] in ("tclass_conflict", "tclass_and_lumclass_conflict")
    assert chk.nsigma_teff[i[0]] > chk.threshold
    assert chk.flags[i[0]] & flags.SPTYPE_CONFLICT


def _swap(types, idx, rng, fraction=0.3):
    swapped = rng.random(len(idx)) < fraction
    new = types.copy()
    for i in idx[swapped]:
        p = types[i]
        to_giant = p.lumclass == "V"
        new[i] = dataclasses.replace(
            p, raw=p.raw + " [swapped]", lumclass="III" if to_giant else "V",
            lum_range=(4.0, 4.0) if to_giant else (6.0, 6.0),
        )
    return new, idx[swapped], idx[~swapped]


def test_injected_v_iii_swap(stars):
    t, pos, types, chk = stars
    lc = np.array([p.lumclass for p in types])
    single = np.array([(not p.composite) and p.kind in ("mk", "am_ap") for p in types])
    idx = np.flatnonzero(np.isin(lc, ["V", "III"]) & single & np.isfinite(pos.logl))
    assert len(idx) > 2500
    new, sw, un = _swap(types, idx, np.random.default_rng(20240515))
    res = check_types(new, pos.logt, pos.logl, logt_err=pos.logt_err, logl_err=pos.logl_err, hr_flags=pos.flags)
    lum = np.char.find(res.verdict, "lumclass_conflict") >= 0
    anyc = res.is_conflict
    # where the calibration can tell V from III at the star's Teff (sequences >= 3 summed sigma
    # apart: G-M stars), the swap must be caught in >= 90 % with <= 5 % false alarms (design bar)
    sep_ok = class_separation(pos.logt, "V", "III") >= res.threshold
    caught = lum[sw][sep_ok[sw]].mean()
    false_alarm = anyc[un][sep_ok[un]].mean()
    overall = lum[sw].mean()
    print(f"\nswapped {len(sw)}, resolvable {sep_ok[sw].sum()}: caught {caught:.3f}, "
          f"false alarms (any conflict) {false_alarm:.3f}; all swapped: caught {overall:.3f}, "
          f"lum. false alarms {lum[un].mean():.3f}")
    assert caught >= 0.90   # measured 0.987
    # issue-14 bar (design.md): <= 3 % false alarms. Measured 0.020 (21 of 1,060); 0.032 before the
    # M-giant B-V turnover was weighed (11 of the 34 were M4-M6 III typed stars whose B-V, bluer than
    # that of early-M giants, gave a K-giant Teff), 0.040 before class III was allowed along the giant
    # branch below the RGB tip. The rest: types with "..." remarks or G-K "V" types 0.6-1.2 dex above
    # the main sequence, and K giants whose B-V is 0.25 mag off their type (docs/sptype.md).
    assert false_alarm <= 0.03
    assert lum[un].mean() <= 0.05
    # B-F stars: V and III overlap on the HR diagram (Jaschek & Gomez 1998); swaps there are
    # mostly missed, which is why the overall rate is far below 90 % - documented, not hidden
    assert 0.4 < overall < 0.9
