"""The type-vs-HR-position check on stars placed at published calibration points.

Positions used (check values): Pecaut & Mamajek 2013 (v2024.05.15) G2V Teff 5770 K, log L 0.010;
Straizys & Kuriliene 1981 (via the MK note §3.2) K0 III Teff 4800 K, log L 1.69 and M2 Ia Teff
3500 K, log L 5.21; the Sun Teff 5772 K, L = 1 Lsun (IAU 2015 B3). Thresholds are the default
3 sigma of the calibration scatter (MK note §3.4/3.5).
"""

from __future__ import annotations

import numpy as np
import pytest

from hrstage import flags
from hrstage.columns import SPTYPE_COLUMNS
from hrstage.errors import HrstageInputError
from hrstage.sptype import VERDICTS, check_types, class_separation, parse_many, summarise_checks

G2V = (np.log10(5770.0), 0.010)    # PM13
K0III = (np.log10(4800.0), 1.69)   # SK81
M2IA = (np.log10(3500.0), 5.21)    # SK81
SUN = (np.log10(5772.0), 0.0)      # IAU 2015 B3


def _run(types, positions, **kw):
    logt = np.array([p[0] for p in positions])
    logl = np.array([p[1] for p in positions])
    return check_types(np.array(types, dtype=object), logt, logl, **kw)


@pytest.mark.parametrize(
    "sptype,pos,verdict,suggested",
    [
        ("G2V", G2V, "consistent", "V"),
        ("G2V", SUN, "consistent", "V"),
        ("G2III", G2V, "lumclass_conflict", "V"),
        ("M1V", G2V, "tclass_conflict", "V"),
        ("M1III", G2V, "tclass_and_lumclass_conflict", "V"),
        ("K0III", K0III, "consistent", "III"),
        ("K0 III CN1", K0III, "consistent", "III"),
        ("K3V", K0III, "lumclass_conflict", "III"),          # PM13 K3V: 4870 K, like a K0 giant
        ("K3V-IV", K0III, "consistent", "III"),  # IV reaches K0III within 2.9 sigma (SK81 IV 0.69 dex)
        ("K0V", K0III, "tclass_and_lumclass_conflict", "III"),  # PM13 K0V is 5290 K, 3 sigma hotter
        ("K0III-IV", K0III, "consistent", "III"),
        ("K0", K0III, "not_checkable:no_lumclass", "III"),   # R14: all classes tested
        ("gK0", K0III, "consistent", "III"),                 # Mount Wilson prefix g = III
        ("M2Ia", M2IA, "consistent", "Ia"),
        ("M2Iab-Ib", M2IA, "consistent", "Ia"),              # supergiant sub-classes tested together
        ("M2V", M2IA, "lumclass_conflict", "Ia"),
        ("K-M", (np.log10(4000.0), 2.2), "not_checkable:no_lumclass", "III"),  # R13: wide range
        # stage check (docs/sptype.md): DA3.5 = 50400/3.5 = 14400 K (Sion et al. 1983 index) at a
        # 0.6 Msun WD luminosity (log L -2.5, from memory); the same type on the Sun's position
        ("DA3.5", (np.log10(14400.0), -2.5), "consistent", ""),
        ("DA3.5", SUN, "stage_conflict", ""),
        # sdB near 28 kK, log L 1.3 (typical EHB star, from memory); on a G dwarf position
        ("sdB", (np.log10(28000.0), 1.3), "consistent", ""),
        ("sdB5", G2V, "stage_conflict", ""),
        # carbon star on the AGB (3000 K, log L 3.8, from memory) and on a K dwarf position
        ("C5,4", (np.log10(3000.0), 3.8), "consistent", ""),
        ("C5,4", (np.log10(4500.0), -0.6), "stage_conflict", ""),
        ("S4/1III", (np.log10(3300.0), 3.4), "consistent", ""),   # S giant on the AGB (from memory)
        # a hot WR star lies left of the ZAMS, outside every stage region: undecided, not a pass
        # (60 kK, log L 5.6: a typical WN star, from memory)
        ("WN7", (np.log10(60000.0), 5.6), "not_checkable:stage_undecided", ""),
        ("WC8", SUN, "stage_conflict", ""),
        # cool subdwarf: calibration passes (fainter than V), but a white-dwarf position is excluded
        # (4500 K at log L -0.9 and -3.6: positions from memory)
        ("sdK3", (np.log10(4500.0), -0.9), "consistent", ""),
        ("sdK3", (np.log10(4500.0), -3.6), "stage_conflict", ""),
        ("xyz", G2V, "not_checkable:unparsed", ""),
        ("", G2V, "not_checkable:no_type", ""),
        ("G2V", (np.nan, 0.0), "not_checkable:no_hr_position", ""),
    ],
)
def test_verdicts(sptype, pos, verdict, suggested):
    chk = _run([sptype], [pos])
    assert chk.verdict[0] == verdict
    assert verdict in VERDICTS
    if suggested:
        assert chk.suggested[0] == suggested
    conflict = verdict.endswith("conflict")
    assert bool(chk.flags[0] & flags.SPTYPE_CONFLICT) == conflict
    assert bool(chk.flags[0] & flags.SPTYPE_UNPARSED) == (verdict == "not_checkable:unparsed")
    if conflict and verdict != "stage_conflict":
        assert chk.nsigma[0] > chk.threshold
    if verdict.startswith("stage") or "stage check" in chk.reason[0]:
        assert chk.hr_stage[0] and chk.hr_stage[0] in chk.reason[0]  # expected vs HR stage named


def test_binary_allowance_and_errors():
    # up to 0.3 dex above the dwarf sequence: possible unresolved binary, not a conflict
    # (design note; common practice); 0.9 dex above is a conflict
    chk = _run(["G2V", "G2V"], [(G2V[0], G2V[1] + 0.28), (G2V[0], G2V[1] + 1.2)])
    assert list(chk.verdict) == ["consistent", "lumclass_conflict"]
    # a large luminosity error makes the second one uncheckable-by-significance, not a conflict
    chk = _run(["G2V"], [(G2V[0], G2V[1] + 1.2)], logl_err=[0.6])
    assert chk.verdict[0] == "consistent"


def test_uncertainty_mark_widens_tolerance():
    # K0 III at 4800 K; a star at 5150 K is 3.6 sigma off K0III's Teff, but a ':' widens by 1.5x
    pos = (np.log10(5150.0), 1.6)
    plain = _run(["K0III"], [pos])
    unsure = _run(["K0:III"], [pos])
    assert plain.nsigma_teff[0] > unsure.nsigma_teff[0]
    assert plain.nsigma_teff[0] == pytest.approx(1.5 * unsure.nsigma_teff[0], rel=1e-6)


def test_columns_and_summary():
    types = ["G2V", "G2III", "K0III", "K0", "xyz", ""]
    pos = [G2V, G2V, K0III, K0III, G2V, G2V]
    chk = _run(types, pos)
    cols = chk.to_columns()
    assert tuple(cols) == SPTYPE_COLUMNS
    assert all(len(v) == len(types) for v in cols.values())
    assert cols["sptype_stage"][0] == "main_sequence" and cols["sptype_stage"][2] == "giant"
    assert cols["sptype_parsed"][4] == ""
    s = summarise_checks(chk)
    rows = {r["lumclass"]: r for r in s}
    assert rows["III"]["n"] == 2 and rows["III"]["conflicts"] == 1 and rows["III"]["conflict_rate"] == 0.5
    assert rows["V"]["consistent"] == 1
    assert rows["(none)"]["not_checkable"] == 3
    assert rows["(all)"]["n"] == len(types)


def test_accepts_parsed_types_and_checks_lengths():
    parsed = parse_many(["G2V", "K0III"])
    chk = check_types(parsed, [G2V[0], K0III[0]], [G2V[1], K0III[1]])
    assert list(chk.verdict) == ["consistent", "consistent"]
    with pytest.raises(HrstageInputError, match="logl"):
        check_types(["G2V", "K0III"], [3.7, 3.7], [0.0])
    with pytest.raises(HrstageInputError, match="sptypes"):
        check_types(["G2V"], [3.7, 3.7], [0.0, 0.0])


def test_class_separation():
    # V and III sequences are ~2 dex apart for K stars but ~0.4 dex for A stars (PM13 vs SK81):
    # the HR position can tell a K giant from a K dwarf, not an A giant from an A dwarf
    assert class_separation(np.log10(4500.0), "V", "III") > 3
    assert class_separation(np.log10(9000.0), "V", "III") < 1.5


def test_saturated_giant_colour_weighs_the_late_m_reading():
    """A giant whose B-V late-M giants share (COLOUR_SATURATED from the Johnson path) has two Teff
    readings: the type's Teff passes if it fits either. Teff of the types: SK81 via the class-III
    calibration (M5 III 3400 K, K3 III 4250 K, K2 III 4450 K); positions on the giant branch."""
    # colour Teff 4300 K (a B-V ~1.3 giant), log L 2.3; 4900 K (a flagged colour Teff for the test's sake), log L 2.0; colour Teff
    # 3900 K (B-V ~1.54), log L 2.6
    pos = [(np.log10(4300.0), 2.3), (np.log10(4900.0), 2.0), (np.log10(3900.0), 2.6)]
    types = ["M5III", "K3III", "K2III"]
    fl = np.full(3, flags.COLOUR_SATURATED, dtype=np.int64)
    et = np.array([0.010, 0.010, 0.037])   # the last one widened as the derive layer does
    plain = _run(types, pos, logt_err=et, logl_err=0.05)
    weighed = _run(types, pos, logt_err=et, logl_err=0.05, hr_flags=fl)
    # without the flag an M5 III at 4300 K is a temperature conflict; with it, consistent and said why
    assert plain.verdict[0] == "tclass_conflict"
    assert weighed.verdict[0] == "consistent" and "M-giant reading" in weighed.reason[0]
    # K3 III (4250 K) fits neither the colour's 4900 K nor the 3000-3650 K reading
    assert weighed.verdict[1] == "tclass_conflict"
    # a type hotter than a saturated colour stays a conflict: the widened error is cool-side only
    assert weighed.verdict[2] == "tclass_conflict"
    with pytest.raises(HrstageInputError, match="hr_flags"):
        _run(types, pos, hr_flags=np.zeros(2, dtype=np.int64))
    # the same flag on a hot star (an O-B star's flat Gaia colour) never opens the late-M reading
    hot = _run(["M5III"], [(np.log10(20000.0), 3.0)], logt_err=0.05, hr_flags=fl[:1])
    assert hot.verdict[0] == "tclass_conflict"


def test_giant_branch_tip_uses_the_classifiers_metallicity_grid(monkeypatch):
    # the check reads the RGB tip from the same giant-branch grids as the classifier (nearest
    # [Fe/H] grid point, 4 decimals): no grids of its own at other [Fe/H] values (each would be a
    # separate build and cache entry)
    from hrstage.classifier import _branch
    from hrstage.classifier._core import FEH_GRID

    keys = []
    real = _branch.branch_grids

    def spy(feh=0.0, *args, **kw):
        keys.append(feh)
        return real(feh, *args, **kw)

    monkeypatch.setattr(_branch, "branch_grids", spy)
    fehs = np.array([0.3, -2.45, -0.13, 0.02, np.nan])   # beyond both ends, between points, missing
    n = len(fehs)
    res = _run(["K0III"] * n, [K0III] * n, feh=fehs)
    assert keys, "the K0 III check reads the RGB tip"
    assert set(keys) <= {round(float(g), 4) for g in FEH_GRID}
    assert list(res.verdict) == ["consistent"] * n
