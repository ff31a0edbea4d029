"""prebuild: the same cached maps as stage_map, free_run included, whatever the thread count."""

import numpy as np
import pytest

from hrstage.errors import HrstageInputError
from hrstage.stagemap import StageParams, prebuild, stage_map
from hrstage.stagemap import _map


def test_prebuild_fills_the_cache_with_free_run():
    fehs = [-1.2345, 0.05, -1.2345, -0.6]  # a repeat: built once
    maps = prebuild(fehs, workers=2, hb_depth=0.11)
    assert len(maps) == 4 and maps[0] is maps[2]
    for f, sm in zip(fehs, maps):
        assert stage_map(f, hb_depth=0.11) is sm  # the cache holds it
        assert "free_run" in sm.__dict__  # computed already
        assert sm.params == StageParams(hb_depth=0.11)
        assert sm.feh == round(f, 3)


def test_prebuild_threads_give_the_same_maps_as_a_plain_build():
    fehs = [-1.9, 0.15]
    maps = prebuild(fehs, workers=2, params=StageParams(binary_offset=0.25))
    for f, sm in zip(fehs, maps):
        ref = _map.StageMap(f, StageParams(binary_offset=0.25))  # fresh, one thread
        for name in ("raw", "codes", "mass_lookup", "free_run"):
            assert np.array_equal(getattr(sm, name).flat, getattr(ref, name).flat, equal_nan=True), name


def test_prebuild_one_worker_and_errors():
    (sm,) = prebuild(0.0, workers=1)
    assert sm is stage_map(0.0)
    with pytest.raises(HrstageInputError):
        prebuild([0.0, float("nan")])
    with pytest.raises(HrstageInputError):
        prebuild([0.0], workers=0)
    with pytest.raises(HrstageInputError):
        prebuild([0.0], no_such_parameter=1)
