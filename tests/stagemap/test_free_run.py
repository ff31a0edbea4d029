"""The run-length free_run raster equals a straightforward reference, bit for bit.

The reference is the previous algorithm, kept here: along each axis the distance of every cell to
the nearest change of value on either side (cumulative maximum / minimum of the change
positions), the edge counting as a change, then ``min(d // unit, 15)``; the axis-0 pass on a
transposed copy. This checks the fast formulation against the plain one, not the physics (the
classifier's use of the raster is checked in ``test_stagemap.py`` and the classifier tests).
"""

import numpy as np
import pytest

from hrstage.stagemap import StageParams
from hrstage.stagemap import _map
from hrstage.stagemap._raster import run_levels


def _ref_run(a, unit, cap):
    a = np.ascontiguousarray(a)
    ny, nx = a.shape
    i = np.arange(nx, dtype=np.int64)[None, :]
    start = np.ones(a.shape, dtype=bool)
    start[:, 1:] = a[:, 1:] != a[:, :-1]
    left = np.maximum.accumulate(np.where(start, i, 0), axis=1)
    end = np.ones(a.shape, dtype=bool)
    end[:, :-1] = start[:, 1:]
    right = np.minimum.accumulate(np.where(end, i, nx - 1)[:, ::-1], axis=1)[:, ::-1]
    d = np.minimum(i - left, right - i)
    return np.minimum(d // unit, cap).astype(np.uint8)


def _ref_levels(a, unit=8, cap=15):
    return _ref_run(a, unit, cap) | (_ref_run(a.T, unit, cap).T << 4)


def _naive_levels(a, unit=8, cap=15):
    """Cell by cell (tiny arrays only): grow the window while the value stays the same."""
    ny, nx = a.shape
    out = np.zeros(a.shape, dtype=np.uint8)
    for j in range(ny):
        for i in range(nx):
            kx = 0
            while kx < cap:
                w = unit * (kx + 1)
                if i - w < 0 or i + w >= nx or (a[j, i - w : i + w + 1] != a[j, i]).any():
                    break
                kx += 1
            ky = 0
            while ky < cap:
                w = unit * (ky + 1)
                if j - w < 0 or j + w >= ny or (a[j - w : j + w + 1, i] != a[j, i]).any():
                    break
                ky += 1
            out[j, i] = kx | (ky << 4)
    return out


@pytest.mark.parametrize(
    "feh, params",
    [(0.0, StageParams()), (-2.0, StageParams()), (0.3, StageParams(binary_promote=True, hb_height=0.0))],
)
def test_free_run_of_real_maps_equals_reference(feh, params):
    sm = _map.StageMap(feh, params)
    got = sm.free_run.values
    want = _ref_levels(sm.codes.values, sm.FREE_RUN_UNIT, 15)
    assert got.dtype == np.uint8
    assert np.array_equal(got, want)
    assert sm.free_run.flat[0] == 0  # border


@pytest.mark.parametrize(
    "a",
    [
        np.zeros((1, 1), dtype=np.int8),
        np.zeros((1, 300), dtype=np.int8),  # single row: runs longer than the cap
        np.zeros((300, 1), dtype=np.int8),  # single column
        np.arange(40, dtype=np.int8).reshape(5, 8),  # every cell its own run
        np.zeros((241, 243), dtype=np.int8),  # one run, just above 2 x 120 cells
        np.pad(np.ones((17, 17), dtype=np.int8), 3),  # a block off the borders
    ],
    ids=["1x1", "row", "column", "all-changes", "one-run", "block"],
)
def test_free_run_edge_cases_equal_reference(a):
    got = run_levels(a)
    assert np.array_equal(got, _ref_levels(a))
    if a.size <= 300 * 300:
        assert np.array_equal(got, _naive_levels(a))


def test_free_run_random_rasters_equal_reference():
    rng = np.random.default_rng(3)
    for shape, p_change in [((257, 311), 0.002), ((64, 1000), 0.02), ((513, 130), 0.3), ((31, 29), 0.05)]:
        # piecewise-constant rows and columns with runs of all lengths around the cap (120 cells)
        steps = rng.random(shape) < p_change
        a = (np.cumsum(steps, axis=1) + np.cumsum(rng.random(shape) < p_change, axis=0)) % 5
        a = a.astype(np.int8)
        assert np.array_equal(run_levels(a), _ref_levels(a))
        for unit, cap in [(1, 15), (3, 7), (8, 0)]:
            assert np.array_equal(run_levels(a, unit, cap), _ref_levels(a, unit, cap))
    small = (rng.random((40, 37)) < 0.1).cumsum(axis=1).astype(np.int16) % 3
    assert np.array_equal(run_levels(small, 2, 5), _naive_levels(small, 2, 5))


def test_free_run_rejects_bad_arguments():
    with pytest.raises(ValueError):
        run_levels(np.zeros(5))
    with pytest.raises(ValueError):
        run_levels(np.zeros((3, 3)), cap=16)
