"""Rows whose photometry fits the white-dwarf reading and another one: both carried, probabilities mixed."""

import numpy as np
import pytest
from astropy.table import Table

import hrstage
from hrstage import flags as F
from hrstage.derive import from_gaia
from hrstage.models import montreal_wd


def _edge_star(sig_plx_frac):
    # invented star: (BP-RP)0 = 0.8 at the bright edge of the white-dwarf reading (the log g 6.5
    # sequence) moved to the EDR3 scale, at 100 pc
    c = 0.8
    m_edge = float(montreal_wd.sequence_mag(c, 6.5)) + montreal_wd.EDR3_MAG_OFFSET
    c_obs = montreal_wd.EDR3_COLOUR_OFFSET[0] + c * (1 + montreal_wd.EDR3_COLOUR_OFFSET[1])
    return Table({"phot_g_mean_mag": [m_edge + 5.0 + 0.2], "bp_rp": [c_obs], "parallax": [10.0],
                  "parallax_error": [sig_plx_frac * 10.0]})


def test_two_readings_are_mixed():
    t = _edge_star(0.3)
    pos = from_gaia(t["phot_g_mean_mag"], t["bp_rp"], t["parallax"], parallax_err=t["parallax_error"])
    assert pos.flags[0] & F.TWO_READINGS
    p_other = pos.extra["other_reading"]["p"][0]
    assert 0.05 <= p_other < 0.5
    # both readings of this red star give nearly the same HR position (the colour sets Teff either
    # way): the white-dwarf stage keeps all the probability, through the mixture
    assert abs(pos.extra["other_reading"]["logt"][0] - pos.logt[0]) < 0.02
    out = hrstage.classify(t, seed=3)
    assert out["flags"][0] & F.TWO_READINGS
    assert out["stage"][0] == "white_dwarf"
    total = sum(float(out[f"prob_{s}"][0]) for s in hrstage.stages.STAGES)
    assert abs(total - 1.0) < 1e-5
    assert abs(float(out["stage_prob"][0]) - float(out["prob_white_dwarf"][0])) < 1e-6


def test_mixture_formula():
    # the mixture (1 - p) P(this reading) + p P(other reading), on two rows, one with another reading
    from types import SimpleNamespace

    from hrstage.classifier._text import CodedText
    from hrstage.engine.readings import mix_other_reading
    from hrstage.stages import CODE, STAGES

    n = 2
    cols = {f"prob_{s}": np.zeros(n, dtype="f4") for s in STAGES}
    cols["prob_white_dwarf"][:] = 1.0
    cols["stage"] = CodedText(STAGES, np.array([CODE["white_dwarf"]] * n))
    cols["stage_prob"] = np.ones(n, dtype="f4")
    extra = {"other_reading": {"rows": np.array([0]), "p": np.array([0.3]), "logt": np.array([4.4]),
                               "logl": np.array([1.3]), "logt_err": np.array([0.02]),
                               "logl_err": np.array([0.1]), "corr": np.array([0.0])}}
    pos = SimpleNamespace(extra=extra, logt=np.array([4.3, 4.0]))
    proba = np.zeros((1, len(STAGES)))
    proba[0, CODE["hot_subdwarf"]] = 1.0
    seen = []

    def classify(rows, *hr):
        seen.append(rows.tolist())
        return SimpleNamespace(proba=proba)

    mix_other_reading(cols, pos, classify)
    assert seen == [[0]]
    assert cols["prob_white_dwarf"][0] == np.float32(0.7) and cols["prob_hot_subdwarf"][0] == np.float32(0.3)
    assert cols["prob_white_dwarf"][1] == 1.0 and cols["stage_prob"][0] == np.float32(0.7)


def test_precise_parallax_single_reading():
    t = _edge_star(0.01)
    pos = from_gaia(t["phot_g_mean_mag"], t["bp_rp"], t["parallax"], parallax_err=t["parallax_error"])
    assert not pos.flags[0] & F.TWO_READINGS
    assert "other_reading" not in pos.extra
    assert "white dwarf" in pos.source[0]


def test_just_brighter_than_the_edge_keeps_the_white_dwarf_share():
    # invented blue star (BP-RP)0 = -0.3 (DR2), 0.3 mag brighter than the white-dwarf edge, with a
    # 15 % parallax (sigma_M = 0.33 mag): read as a hot subdwarf, the white-dwarf reading (at the edge)
    # keeps Phi(-0.3/0.33) = 18 % (common practice: the normal distribution)
    c = -0.3
    m = float(montreal_wd.sequence_mag(c, 6.5)) - 0.3
    pos = from_gaia(m + 5.0, c, 10.0, parallax_err=1.5, gaia_release="dr2")
    assert "hot subdwarf" in pos.source[0]
    assert pos.flags[0] & F.TWO_READINGS
    other = pos.extra["other_reading"]
    assert list(other["rows"]) == [0]
    assert 0.1 < other["p"][0] < 0.3
    assert np.isfinite(other["logt"][0]) and other["logl"][0] < pos.logl[0]
    # a precise parallax: one reading only
    pos = from_gaia(m + 5.0, c, 10.0, parallax_err=0.05, gaia_release="dr2")
    assert not pos.flags[0] & F.TWO_READINGS and "other_reading" not in pos.extra


def test_fainter_than_the_grid_is_still_a_white_dwarf():
    # invented star 1 mag fainter than the log g 9.5 extrapolation of the grid at (BP-RP)0 = 0.3:
    # white-dwarf reading at that faint edge, flagged as extrapolated; L from its own magnitude
    c = 0.3
    m = float(montreal_wd.sequence_mag(c, 9.5)) + 1.0
    pos = from_gaia(m + 5.0, c, 10.0, gaia_release="dr2")
    assert "white dwarf" in pos.source[0] and pos.flags[0] & F.OUTSIDE_VALIDITY
    edge = from_gaia(m + 5.0 - 1.0 + 1e-6, c, 10.0, gaia_release="dr2")
    assert pos.teff[0] == pytest.approx(edge.teff[0], rel=1e-4)
    assert pos.logl[0] == pytest.approx(edge.logl[0] - 0.4, abs=1e-4)
