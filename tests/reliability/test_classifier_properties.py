"""Property-based tests of the vectorised classifier (issue 8, reliability).

The properties follow from definitions, not from values we computed:

* a probability vector over the stages has entries in [0, 1] that sum to 1 (Kolmogorov axioms);
* a seeded Monte Carlo is a deterministic function of its inputs and its seed;
* a point farther than 0.01 dex from every stage boundary keeps its label when moved by 1e-6 dex
  (the map is piecewise constant; 0.01 dex is far larger than floating-point noise);
* at fixed Teff, more luminosity means a larger radius (Stefan-Boltzmann, L = 4 pi R^2 sigma T^4):
  along a vertical line of the HR diagram at Teff < 5000 K stars go from dwarfs (subdwarf, main
  sequence) through the giant branch to bright giants and supergiants (the MK luminosity classes
  V -> III -> II -> I are a sequence of increasing luminosity at fixed spectral type; common
  practice). A star made brighter at fixed cool Teff therefore never moves from an evolved class
  (giant, bright giant, supergiant) back to a dwarf class (main sequence, subdwarf, white dwarf,
  hot subdwarf), and never from supergiant down to a lower class.

Hypothesis runs with bounded ``max_examples`` and no deadline (the machine is shared).
"""

from __future__ import annotations

import numpy as np
import pytest

hypothesis = pytest.importorskip("hypothesis")
from hypothesis import HealthCheck, assume, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

from hr_strategies import feh_box, hostile_hr_inputs, logl_box, logt_box  # noqa: E402
from hrstage import stages as S  # noqa: E402

classifier = pytest.importorskip("hrstage.classifier", reason="classifier layer not importable")
stagemap = pytest.importorskip("hrstage.stagemap", reason="stage-map layer not importable")

classify_hr = classifier.classify_hr
stage_map = stagemap.stage_map

FAST = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
EVOLVED = {S.GIANT, S.BRIGHT_GIANT, S.SUPERGIANT}
DWARFISH = {S.MAIN_SEQUENCE, S.SUBDWARF, S.WHITE_DWARF, S.HOT_SUBDWARF}


def _check_result(res, n: int) -> None:
    code = np.asarray(res.code)
    stage = np.asarray(res.stage)
    proba = np.asarray(res.proba, dtype=float)
    assert code.shape == (n,) and stage.shape == (n,)
    assert np.all((code >= 0) & (code < len(S.STAGES)))
    # names and codes tell the same story
    assert list(stage) == [S.STAGES[c] for c in code]
    assert proba.shape == (n, len(S.STAGES))
    assert np.all(np.isfinite(proba))
    assert np.all((proba >= 0.0) & (proba <= 1.0))
    np.testing.assert_allclose(proba.sum(axis=1), 1.0, rtol=0, atol=1e-9)
    flags = np.asarray(res.flags)
    assert flags.shape == (n,) and np.issubdtype(flags.dtype, np.integer) and np.all(flags >= 0)
    reason = np.asarray(res.reason)
    assert reason.shape == (n,)


@FAST
@given(hostile_hr_inputs())
def test_any_floats_no_crash_and_proper_probabilities(kwargs):
    n = len(kwargs["logt"])
    res = classify_hr(**kwargs, seed=11)
    _check_result(res, n)
    # a star whose position is not finite cannot be placed: unclassified, with a reason
    bad = ~(np.isfinite(kwargs["logt"]) & np.isfinite(kwargs["logl"]))
    code = np.asarray(res.code)
    assert np.all(code[bad] == S.UNCLASSIFIED)
    reasons = np.asarray(res.reason, dtype=object)
    assert all(isinstance(r, str) and r.strip() for r in reasons[code == S.UNCLASSIFIED])
    cols = res.to_columns()
    assert all(len(v) == n for v in cols.values())


@settings(max_examples=30, deadline=None)
@given(st.lists(st.one_of(logt_box, st.floats(allow_nan=True, allow_infinity=True)), min_size=1, max_size=10),
       st.integers(0, 9))
def test_implausible_log_teff_is_a_clear_input_error(values, where):
    """A finite log Teff outside 2..6.5 is a unit mistake (Teff in K passed as log Teff): one
    clear error that names the row, not a crash and not a silent label."""
    from hrstage.errors import HrstageInputError

    logt = np.array(values, dtype=float)
    i = where % logt.size
    logt[i] = 3772.0                      # a temperature in K where log10(Teff/K) belongs
    with pytest.raises(HrstageInputError, match="row"):
        classify_hr(logt, np.zeros(logt.size))


@FAST
@given(
    st.lists(st.tuples(logt_box, logl_box, st.floats(0.001, 0.1), st.floats(0.01, 0.5), st.floats(-0.9, 0.9)),
             min_size=1, max_size=25),
    st.integers(0, 2**31 - 1),
)
def test_same_seed_same_result(rows, seed):
    logt, logl, et, el, rho = (np.array(x) for x in zip(*rows))
    kw = dict(logt_err=et, logl_err=el, corr=rho, n_draws=32)
    a = classify_hr(logt, logl, **kw, seed=seed)
    b = classify_hr(logt, logl, **kw, seed=seed)
    np.testing.assert_array_equal(np.asarray(a.code), np.asarray(b.code))
    np.testing.assert_array_equal(np.asarray(a.proba), np.asarray(b.proba))
    np.testing.assert_array_equal(np.asarray(a.flags), np.asarray(b.flags))
    np.testing.assert_array_equal(np.asarray(a.mass, dtype=float), np.asarray(b.mass, dtype=float))
    _check_result(a, len(logt))


# 24 directions on circles of radius 0.01 and 0.005 dex, plus the centre: a point whose whole
# neighbourhood has one label is at least ~0.01 dex from any boundary (up to a sliver thinner than
# the angular step, which the second circle and the test's 1e-6 perturbation make irrelevant)
_ANG = np.linspace(0.0, 2.0 * np.pi, 24, endpoint=False)
_RING = np.concatenate([np.stack([r * np.cos(_ANG), r * np.sin(_ANG)], axis=1) for r in (0.01, 0.005)])


@FAST
@given(logt_box, logl_box, feh_box, st.floats(-1.0, 1.0), st.floats(-1.0, 1.0))
def test_labels_stable_under_tiny_perturbations_away_from_boundaries(logt, logl, feh, dx, dy):
    sm = stage_map(feh)
    centre = int(np.asarray(sm.locate(np.array([logt]), np.array([logl])))[0])
    around = np.asarray(sm.locate(logt + _RING[:, 0], logl + _RING[:, 1]))
    assume(np.all(around == centre))
    eps = 1e-6
    pts_t = np.array([logt, logt + eps * dx, logt - eps * dy])
    pts_l = np.array([logl, logl + eps * dy, logl + eps * dx])
    # a scalar [Fe/H] classifies on the map of that very [Fe/H] (per-row values go to the nearest
    # 0.25-dex grid map, whose edges differ slightly: (3.3125, -4.5) at -0.625 is unclassified on the
    # -0.625 map and pre-main sequence on the -0.5 one)
    res = classify_hr(pts_t, pts_l, feh=feh)
    codes = np.asarray(res.code)
    assert np.all(codes == codes[0]), (logt, logl, feh, codes)
    # without errors, the point classification is the map's own label
    assert codes[0] == centre


@settings(max_examples=40, deadline=None)
@given(st.floats(np.log10(3200.0), np.log10(4950.0)), st.floats(-1.0, 0.3))
def test_brighter_at_fixed_cool_teff_never_returns_to_dwarf(logt, feh):
    grid = np.arange(-3.0, 6.5, 0.01)
    for codes in (
        np.asarray(stage_map(feh).locate(np.full(grid.size, logt), grid)),
        np.asarray(classify_hr(np.full(grid.size, logt), grid, feh=np.full(grid.size, feh)).code),
    ):
        placed = codes[codes != S.UNCLASSIFIED]
        evolved_at = np.flatnonzero(np.isin(placed, list(EVOLVED)))
        if evolved_at.size:
            after = placed[evolved_at[0]:]
            assert not np.isin(after, list(DWARFISH)).any(), (logt, feh, S.STAGES[after[0]])
        sg_at = np.flatnonzero(placed == S.SUPERGIANT)
        if sg_at.size:
            after = placed[sg_at[0]:]
            assert np.all(after == S.SUPERGIANT), (logt, feh, sorted({S.STAGES[c] for c in after}))


@settings(max_examples=25, deadline=None)
@given(st.floats(np.log10(3200.0), np.log10(4950.0)), st.floats(-1.0, 0.3))
def test_cool_sequence_reaches_giants_and_supergiants(logt, feh):
    """The vertical line at cool Teff does cross dwarfs, giants and supergiants, so the property
    above is not vacuous. log L = 5.5 at Teff < 5000 K is far above any giant-branch tip (log L
    about 3.4; common practice) and can only be a supergiant."""
    grid = np.arange(-3.0, 6.5, 0.01)
    codes = np.asarray(stage_map(feh).locate(np.full(grid.size, logt), grid))
    assert np.isin(codes, list(DWARFISH)).any()
    assert np.isin(codes, [S.GIANT, S.BRIGHT_GIANT]).any()
    assert codes[np.argmin(np.abs(grid - 5.5))] == S.SUPERGIANT
