"""The stage maps' on-disk cache (hrstage.stagemap._store): maps restored from it are the maps
built in memory, bit for bit; the key follows everything that defines a map; concurrent writers,
broken files and unwritable folders are safe; the switch turns it off.

Maps are made with :class:`StageMap` directly (not the in-process ``stage_map`` cache) so that each
one is built or restored afresh. This checks the cache against the build, not the physics (that
is ``test_stagemap.py``).
"""

from __future__ import annotations

import os
import subprocess
import sys

import numpy as np
import pytest

from hrstage.classifier import classify_hr
from hrstage.stagemap import StageParams
from hrstage.stagemap import _store
from hrstage.stagemap._map import StageMap

RASTERS = ("raw", "codes", "mass_lookup", "free_run", "young_zone")


@pytest.fixture
def cache(tmp_path, monkeypatch):
    folder = tmp_path / "cache"
    monkeypatch.setenv(_store.ENV_DIR, str(folder))
    monkeypatch.delenv(_store.ENV_SWITCH, raising=False)
    return folder


def _padded(sm, name):
    return np.asarray(sm.__dict__[name].flat) if name == "free_run" else np.asarray(getattr(sm, name).flat)


def _in_memory(feh, params=None):
    os.environ[_store.ENV_SWITCH] = "0"
    try:
        sm = StageMap(feh, params)
        sm.__dict__["free_run"] = sm._free_run_lookup()
        return sm
    finally:
        del os.environ[_store.ENV_SWITCH]


def test_restored_map_is_the_built_map(cache):
    ref = _in_memory(-0.75)
    built = StageMap(-0.75)            # builds and stores
    files = sorted(p.name for p in (cache / "stagemaps").rglob("*.npy"))
    assert files == sorted(f"{n}.npy" for n in RASTERS)
    restored = StageMap(-0.75)         # from the files, memory-mapped
    for name in RASTERS:
        assert isinstance(restored.__dict__[name].flat, np.memmap)
        for sm in (built, restored):
            got = _padded(sm, name)
            assert got.dtype == _padded(ref, name).dtype
            assert np.array_equal(got, _padded(ref, name), equal_nan=True), name
    assert restored.mass_grid == ref.mass_grid and restored.m_sg == ref.m_sg


def test_classification_same_with_and_without_the_cache(cache, monkeypatch):
    rng = np.random.default_rng(11)
    n = 4000
    logt = rng.uniform(3.45, 4.6, n)
    logl = rng.uniform(-3.5, 5.5, n)
    feh = rng.choice([-1.5, -0.4, 0.0, 0.1], n)
    kw = dict(logt_err=np.full(n, 0.01), logl_err=np.full(n, 0.08), feh=feh, n_draws=64, seed=4)

    def run():
        import hrstage.stagemap._map as m

        m._cached.cache_clear()
        r = classify_hr(logt, logl, **kw)
        return r.code.copy(), r.proba.copy(), r.mass.copy(), r.flags.copy()

    monkeypatch.setenv(_store.ENV_SWITCH, "off")
    off = run()
    monkeypatch.delenv(_store.ENV_SWITCH)
    cold, warm = run(), run()          # first builds and stores, second reads the files
    assert any((cache / "stagemaps").rglob("mc_block_codes_*.npy"))
    for a, b, c in zip(off, cold, warm):
        assert np.array_equal(a, b, equal_nan=True) and np.array_equal(a, c, equal_nan=True)


def test_key_follows_what_defines_a_map(cache, monkeypatch):
    base = StageMap(0.0)
    key = _store.map_key(base)
    assert _store.map_key(StageMap(0.0)) == key
    assert _store.map_key(StageMap(0.25)) != key
    other = StageMap(0.0, StageParams(binary_offset=0.25))
    assert _store.map_key(other) != key
    assert not np.array_equal(np.asarray(other.raw.flat), np.asarray(base.raw.flat))
    with monkeypatch.context() as mp:
        mp.setattr(_store, "__version__", "999.0")
        assert _store.map_key(base) != key
    with monkeypatch.context() as mp:
        mp.setattr(_store, "source_hash", lambda: "edited source")
        assert _store.map_key(base) != key
    with monkeypatch.context() as mp:
        mp.setattr(_store, "FORMAT", _store.FORMAT + 1)
        assert _store.map_key(base) != key
    assert _store.map_key(base) == key


def test_source_hash_covers_the_map_building_code():
    root = os.path.dirname(os.path.dirname(_store.__file__))
    assert len(_store.source_hash()) == 64
    # the folders hashed exist (a renamed folder would silently drop out of the key)
    for entry in _store._SOURCES:
        assert os.path.exists(os.path.join(root, entry)), entry


def test_switch_turns_it_off(cache, monkeypatch):
    monkeypatch.setenv(_store.ENV_SWITCH, "0")
    sm = StageMap(0.0)
    assert _store.folder(sm) is None and not cache.exists()
    assert not isinstance(sm.raw.flat, np.memmap)


def test_xdg_cache_home_is_honoured(tmp_path, monkeypatch):
    monkeypatch.delenv(_store.ENV_DIR, raising=False)
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    assert _store.cache_root() == tmp_path / "xdg" / "hrstage"
    monkeypatch.setenv("XDG_CACHE_HOME", "relative/ignored")   # the XDG spec: relative paths are invalid
    monkeypatch.setenv("HOME", str(tmp_path / "home"))
    assert _store.cache_root() == tmp_path / "home" / ".cache" / "hrstage"
    monkeypatch.setenv(_store.ENV_DIR, str(tmp_path / "own"))
    assert _store.cache_root() == tmp_path / "own"


def test_broken_file_is_rebuilt(cache):
    ref = _in_memory(0.0)
    StageMap(0.0)
    path = next((cache / "stagemaps").rglob("codes.npy"))
    path.write_bytes(path.read_bytes()[:1000])          # truncated (a full disk)
    sm = StageMap(0.0)
    assert np.array_equal(np.asarray(sm.codes.flat), np.asarray(ref.codes.flat))
    assert path.stat().st_size > 1000                   # stored again, whole


def test_unwritable_folder_is_not_an_error(tmp_path, monkeypatch):
    blocker = tmp_path / "file-not-folder"
    blocker.write_text("x")
    monkeypatch.setenv(_store.ENV_DIR, str(blocker))    # mkdir fails below a plain file
    ref = _in_memory(0.0)
    sm = StageMap(0.0)
    assert np.array_equal(np.asarray(sm.raw.flat), np.asarray(ref.raw.flat))


_WRITER = """
import sys
import numpy as np
from hrstage.stagemap._map import StageMap
sm = StageMap(-1.25)
print(int(np.asarray(sm.raw.flat, dtype=np.int64).sum()), int(np.asarray(sm.free_run.flat, dtype=np.int64).sum()))
"""


def test_concurrent_writers(cache):
    """Four processes build and store the same map at once into an empty cache: all get the same
    map, the files load, no temporary file is left."""
    env = dict(os.environ, **{_store.ENV_DIR: str(cache)})
    procs = [subprocess.Popen([sys.executable, "-c", _WRITER], env=env, stdout=subprocess.PIPE, text=True)
             for _ in range(4)]
    outs = [p.communicate(timeout=300)[0].strip() for p in procs]
    assert all(p.returncode == 0 for p in procs)
    ref = _in_memory(-1.25)
    want = f"{int(np.asarray(ref.raw.flat, dtype=np.int64).sum())} {int(np.asarray(ref.free_run.flat, dtype=np.int64).sum())}"
    assert outs == [want] * 4
    names = [p.name for p in (cache / "stagemaps").rglob("*")]
    assert not [n for n in names if n.endswith(".tmp")]
    sm = StageMap(-1.25)
    assert isinstance(sm.raw.flat, np.memmap)


# ---------------------------------------------------------------------------------------------
# records (giant-branch grids) and pruning
# ---------------------------------------------------------------------------------------------
def _grids_equal(a, b):
    import dataclasses

    for f in dataclasses.fields(a):
        x, y = getattr(a, f.name), getattr(b, f.name)
        if isinstance(x, dict):
            assert x.keys() == y.keys(), f.name
            for k in x:
                assert np.array_equal(x[k], y[k], equal_nan=True), (f.name, k)
        elif isinstance(x, np.ndarray):
            assert np.array_equal(x, y, equal_nan=True), f.name
        else:
            assert x == y, f.name


def test_branch_grids_restored_are_the_built_grids(cache):
    from hrstage.classifier import _branch

    ref = _branch._build_branch_grids(-0.4, 13800.0)
    _branch.branch_grids.cache_clear()
    built = _branch.branch_grids(-0.4)                 # builds and stores
    assert (cache / "branchgrids").is_dir()
    _branch.branch_grids.cache_clear()
    restored = _branch.branch_grids(-0.4)              # from the files
    assert isinstance(restored.logt["kiel"], np.memmap) and isinstance(restored.mass, np.memmap)
    _grids_equal(built, ref)
    _grids_equal(restored, ref)
    _branch.branch_grids.cache_clear()


def test_branch_grid_record_without_layout_is_rebuilt(cache):
    from hrstage.classifier import _branch

    _branch.branch_grids.cache_clear()
    _branch.branch_grids(0.25)
    (layout,) = (cache / "branchgrids").rglob(_store.LAYOUT)
    layout.unlink()                       # as if a writer died before finishing the record
    _branch.branch_grids.cache_clear()
    again = _branch.branch_grids(0.25)
    assert layout.exists()
    _grids_equal(again, _branch._build_branch_grids(0.25, 13800.0))
    _branch.branch_grids.cache_clear()


def _age(folder, hours, now):
    t = now - hours * 3600.0
    os.utime(folder / _store.STAMP if (folder / _store.STAMP).exists() else folder, (t, t))


def test_prune_removes_stale_and_idle_folders_only(cache):
    import json
    import time

    now = time.time()
    base = cache / _store.MAPS
    current = StageMap(0.5)._store                      # this version's map, just used
    old_current = StageMap(-0.5)._store                 # this version's map, idle for long
    other_recent = base / "feh+0.000-otherversionrecent"
    other_old = base / "feh+0.000-otherversionold"
    legacy = base / "feh+0.000-nostampatall"
    for f in (other_recent, other_old):
        f.mkdir(parents=True)
        (f / _store.STAMP).write_text(json.dumps({"format": _store.FORMAT, "version": "0.0.1", "source": "x"}))
        (f / "codes.npy").write_bytes(b"x")
    legacy.mkdir()
    (legacy / "codes.npy").write_bytes(b"x")
    _age(other_recent, 2.0, now)                        # used two hours ago by another version
    _age(other_old, _store.STALE_HOURS + 1, now)
    _age(legacy, _store.STALE_HOURS + 1, now)
    _age(old_current, 24.0 * _store.IDLE_DAYS + 1, now)
    removed = set(_store.prune(now=now))
    assert removed == {other_old, legacy, old_current}
    assert current.is_dir() and other_recent.is_dir()
    assert not any(p.name.startswith(".trash") for p in base.iterdir())


def test_pruned_map_stays_readable_by_a_process_that_mapped_it(cache):
    """A process that memory-mapped a map keeps reading it after another process pruned the folder
    (POSIX: an unlinked file lives until its last mapping closes); a new lookup rebuilds it."""
    import time

    if os.name != "posix":
        pytest.skip("unlinking a mapped file is a POSIX guarantee")
    first = StageMap(0.3)
    codes_before = np.array(first.codes.flat)
    where = first._store
    _age(where, 24.0 * _store.IDLE_DAYS + 1, time.time())
    assert where in _store.prune()
    assert not where.exists()
    assert np.array_equal(np.asarray(first.codes.flat), codes_before)     # still mapped, same bytes
    again = StageMap(0.3)                                                  # rebuilt and stored again
    assert np.array_equal(np.asarray(again.codes.flat), codes_before)
    assert where.is_dir()


def test_automatic_pruning_at_most_once_a_day(cache, monkeypatch):
    calls = []
    monkeypatch.setattr(_store, "prune", lambda **kw: calls.append(kw) or [])
    now = 1.0e9
    _store.maybe_prune(now=now)
    _store.maybe_prune(now=now + 3600.0)
    assert len(calls) == 1
    _store.maybe_prune(now=now + _store.PRUNE_EVERY_HOURS * 3600.0 + 1)
    assert len(calls) == 2
