"""Shared test fixtures.

External validation data (third-party catalogues and model grids) live outside the repository;
the tests find them through ``HRSTAGE_VALIDATION_DIR`` (set by ``.ci/run``). When it is unset, the
tests that need them skip with a reason; when it is set but a file is missing, they fail.
"""

from __future__ import annotations

import atexit
import os
import shutil
import tempfile
from pathlib import Path

import pytest

import matplotlib

matplotlib.use("Agg")

# The stage maps' on-disk cache (hrstage.stagemap._store) goes to a folder of this test session,
# never to the user's cache; child processes (CLI tests) inherit it. Removed at the end.
_MAP_CACHE = tempfile.mkdtemp(prefix="hrstage-test-cache-")
os.environ["HRSTAGE_CACHE_DIR"] = _MAP_CACHE
os.environ.pop("HRSTAGE_MAP_CACHE", None)
atexit.register(shutil.rmtree, _MAP_CACHE, True)


def _dir_from_env(var: str) -> Path | None:
    value = os.environ.get(var)
    if not value:
        return None
    return Path(value)


def _data_dir(var: str, what: str) -> Path:
    """The folder named by ``var``: skip when unset, fail when set to something that is not a folder."""
    path = _dir_from_env(var)
    if path is None:
        pytest.skip(f"{var} is not set: {what} not available")
    if not path.is_dir():
        pytest.fail(f"{var}={path} is set but is not a directory")
    return path


@pytest.fixture(scope="session")
def validation_dir() -> Path:
    return _data_dir("HRSTAGE_VALIDATION_DIR", "external validation data")


@pytest.fixture(scope="session")
def validation_file(validation_dir):
    """Return a function name -> Path that fails the test if the file is missing."""

    def get(name: str) -> Path:
        p = validation_dir / name
        if not p.is_file():
            pytest.fail(f"validation file {name} missing from HRSTAGE_VALIDATION_DIR")
        return p

    return get


@pytest.fixture(scope="session")
def models_dir() -> Path:
    """The shared published model grids (HRSTAGE_MODELS_DIR, set by .ci/run)."""
    return _data_dir("HRSTAGE_MODELS_DIR", "published model grids")


@pytest.fixture(scope="session")
def calibration_dir() -> Path:
    return _data_dir("HRSTAGE_CALIBRATION_DIR", "spectral-type calibration tables")
