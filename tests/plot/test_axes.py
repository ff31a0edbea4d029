"""Secondary scales: dwarf spectral-type anchors, M_bol and M_V, solar log g."""

import numpy as np
import pytest

from hrstage.plot.axes import LOGG_SUN, MBOL_SUN, SPTYPE_ANCHORS, logl_to_mbol, mbol_to_logl, sptype_ticks


def _read_mamajek(path):
    teff = {}
    for line in path.read_text().splitlines():
        if not line or line.startswith("#"):
            continue
        parts = line.split()
        if len(parts) > 2 and parts[0].endswith("V") and parts[1].isdigit():
            teff.setdefault(parts[0][:-1], float(parts[1]))
    return teff


@pytest.mark.validation
def test_sptype_anchors_match_the_dwarf_sequence(validation_file):
    # Pecaut & Mamajek 2013 (ApJS 208, 9) dwarf sequence, version 2024.05.15 (validation data)
    table = _read_mamajek(validation_file("mamajek_dwarf_sequence.txt"))
    for name, teff in SPTYPE_ANCHORS:
        assert name in table, name
        assert teff == pytest.approx(table[name], rel=0.01), name


def test_mbol_scale():
    # IAU 2015 Resolution B2: M_bol,sun = 4.74; a 100 L_sun star has M_bol = -0.26
    assert MBOL_SUN == 4.74
    assert logl_to_mbol(0.0) == pytest.approx(4.74)
    assert logl_to_mbol(2.0) == pytest.approx(-0.26)
    assert mbol_to_logl(logl_to_mbol(3.3)) == pytest.approx(3.3)


def test_logg_sun_from_iau_constants():
    # IAU 2015 B3 nominal GM_sun / R_sun^2 = 274.2 m s^-2, log g = 4.438 (common practice)
    assert LOGG_SUN == pytest.approx(4.438, abs=0.001)


def test_sptype_ticks_do_not_crowd():
    pos, lab = sptype_ticks(3.4, 4.75)
    assert {"B0", "A0", "F0", "G0", "K0", "M0"} <= set(lab)
    assert np.all(np.diff(np.sort(pos)) >= 0.035 * 1.35 - 1e-12)
