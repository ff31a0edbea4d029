"""On-disk cache of the stage maps' rasters, shared by runs and processes.

Building one map's rasters (painted regions, mass raster, free-run raster) takes ~0.3 s and ~75 MB
of temporaries; a catalogue with per-star [Fe/H] needs a dozen maps. The rasters depend only on
what defines a map, so they are built once and kept as ``.npy`` files that later runs map into
memory (``numpy.load(mmap_mode="r")``): a run then reads only the pages its stars fall on, and
processes running at the same time share them through the page cache.

Where: ``$HRSTAGE_CACHE_DIR`` if set, else ``$XDG_CACHE_HOME/hrstage`` (``~/.cache/hrstage`` when
``XDG_CACHE_HOME`` is unset), in a ``stagemaps`` folder. ``HRSTAGE_MAP_CACHE=0`` (or ``off``,
``no``, ``false``) turns the cache off: maps are then built in memory in every process, as
before. The folder may be deleted at any time.

Key: a folder per content that defines a map - :data:`FORMAT` (bump it when the stored layout
changes), the package version, a hash of the source of the map-building code (the stage-map,
model and classifier modules and the stage list: any edit rebuilds), the numpy version, the
raster grid, the rounded [Fe/H] and every :class:`~hrstage.stagemap.StageParams` value.

Safe under concurrent writers: each file is written to a temporary name in the same folder and
renamed into place (atomic on POSIX and Windows), so a reader sees a complete file or none; two
processes that build the same map write the same bytes and the last rename wins. A file that does
not load (truncated by a full disk, wrong shape) is ignored and rebuilt. Failing to write (read-only
or full disk) is not an error: the map is used from memory.
"""

from __future__ import annotations

import functools
import hashlib
import json
import mmap
import os
import tempfile
import threading
from pathlib import Path

import numpy as np

from .._version import __version__

#: layout version of the stored files; bump when what is stored, or how, changes
FORMAT = 1

#: environment variables: the cache folder, and the switch
ENV_DIR = "HRSTAGE_CACHE_DIR"
ENV_SWITCH = "HRSTAGE_MAP_CACHE"

_OFF = {"0", "off", "no", "false"}

#: sub-folders of the cache: stage maps' rasters, and other records built from the same sources
MAPS = "stagemaps"
KINDS = (MAPS, "branchgrids")
#: file names inside a keyed folder: what defined it (written when the folder is made, its time
#: touched by every process that uses it), and a record's layout
STAMP = "stamp.json"
LAYOUT = "layout.json"

#: package folders (relative to ``hrstage/``) and modules whose source defines a map's content
_SOURCES = ("stagemap", "models", "classifier", "stages.py")


def enabled() -> bool:
    """Whether the on-disk cache is in use (``HRSTAGE_MAP_CACHE`` not set to 0/off/no/false)."""
    return os.environ.get(ENV_SWITCH, "1").strip().lower() not in _OFF


def cache_root() -> Path:
    """The cache folder of hrstage (``HRSTAGE_CACHE_DIR``, else the XDG user cache folder)."""
    own = os.environ.get(ENV_DIR, "").strip()
    if own:
        return Path(own).expanduser()
    xdg = os.environ.get("XDG_CACHE_HOME", "").strip()
    base = Path(xdg).expanduser() if xdg and Path(xdg).is_absolute() else Path.home() / ".cache"
    return base / "hrstage"


@functools.lru_cache(maxsize=1)
def source_hash() -> str:
    """SHA-256 (hex) of the map-building source files, read once per process."""
    root = Path(__file__).resolve().parent.parent
    h = hashlib.sha256()
    for entry in _SOURCES:
        path = root / entry
        files = sorted(path.rglob("*.py")) if path.is_dir() else [path]
        for f in files:
            h.update(f.relative_to(root).as_posix().encode())
            h.update(b"\0")
            h.update(f.read_bytes())
            h.update(b"\0")
    return h.hexdigest()


def _digest(spec: dict) -> str:
    """32 hex digits of SHA-256 over ``spec`` plus what every stored array depends on (layout
    format, package version, source hash, numpy minor version)."""
    full = {"format": FORMAT, "version": __version__, "source": source_hash(),
            "numpy": ".".join(np.__version__.split(".")[:2]), **spec}
    return hashlib.sha256(json.dumps(full, sort_keys=True, default=repr).encode()).hexdigest()[:32]


def map_key(sm) -> str:
    """Folder name of one map's files: its [Fe/H] and a hash of everything that defines it."""
    g = sm.grid
    spec = {
        "grid": [g.t0, g.t1, g.l0, g.l1, g.dt, g.dl],
        "mass_factor": list(sm.mass_factor),
        "feh": round(float(sm.feh), 3),
        "params": sm.params.as_dict(),
    }
    return f"feh{float(sm.feh):+.3f}-{_digest(spec)}"


def folder(sm) -> Path | None:
    """The folder of one map's files, or None when the cache is off (its use is recorded)."""
    if not enabled():
        return None
    return _mark_used(cache_root() / MAPS / map_key(sm))


def keyed_folder(kind: str, spec: dict) -> Path | None:
    """The folder of a set of arrays of ``kind`` (a sub-folder name of the cache, one of
    :data:`KINDS`) defined by ``spec`` (JSON-able), or None when the cache is off."""
    if not enabled():
        return None
    return _mark_used(cache_root() / kind / _digest(spec))


def cached_record(kind: str, spec: dict, build, cls):
    """A dataclass instance of ``cls`` whose fields are floats, arrays and dicts of arrays, from
    the on-disk cache (arrays memory-mapped) or ``build()`` (then stored).

    The record is complete once its ``layout.json`` (field kinds and the float values, written
    last and atomically) is in place; a folder without it, or with a file that does not load, is
    rebuilt.
    """
    import dataclasses

    where = keyed_folder(kind, spec)
    got = _load_record(where, cls)
    if got is not None:
        return got
    rec = build()
    if where is None:
        return rec
    layout, arrays = {}, {}
    for f in dataclasses.fields(cls):
        value = getattr(rec, f.name)
        if isinstance(value, dict):
            layout[f.name] = {"dict": list(value)}
            arrays.update({f"{f.name}.{k}": v for k, v in value.items()})
        elif isinstance(value, np.ndarray):
            layout[f.name] = {"array": True}
            arrays[f.name] = value
        else:
            layout[f.name] = {"float": float(value)}
    stored = {name: save(where, name, np.asarray(a)) for name, a in arrays.items()}
    if not all(isinstance(a, np.memmap) for a in stored.values()):
        return rec                  # not writable: keep the built record in memory
    if not _write_atomic(where, LAYOUT, json.dumps(layout, sort_keys=True).encode()):
        return rec
    return _load_record(where, cls) or rec


def _load_record(where: Path | None, cls):
    if where is None:
        return None
    try:
        layout = json.loads((where / LAYOUT).read_bytes())
    except (OSError, ValueError):
        return None
    kw = {}
    try:
        for name, kind in layout.items():
            if "float" in kind:
                kw[name] = float(kind["float"])
            elif "array" in kind:
                kw[name] = load(where, name)
                if kw[name] is None:
                    return None
            else:
                kw[name] = {k: load(where, f"{name}.{k}") for k in kind["dict"]}
                if any(v is None for v in kw[name].values()):
                    return None
        return cls(**kw)
    except (TypeError, KeyError, ValueError):   # a layout of an older shape of ``cls``
        return None


_LOAD_LOCK = threading.Lock()


def load(where: Path | None, name: str, shape=None, dtype=None) -> np.ndarray | None:
    """The stored array ``name`` (read-only memory map), or None if absent or not of the
    ``shape`` and ``dtype`` given."""
    if where is None:
        return None
    path = where / f"{name}.npy"
    try:
        # one thread at a time: np.load reads the header with ast.literal_eval, and CPython 3.11's
        # parser can fail in concurrent threads ("AST constructor recursion depth mismatch",
        # python/cpython#106905), which the maps' prebuild threads hit once in a full test run
        with _LOAD_LOCK:
            arr = np.load(path, mmap_mode="r", allow_pickle=False)
    except (OSError, ValueError, EOFError):
        return None
    if ((shape is not None and arr.shape != tuple(shape)) or (dtype is not None and arr.dtype != np.dtype(dtype))
            or not arr.flags.c_contiguous):
        return None
    _random_access(arr)
    return arr


def _random_access(arr) -> None:
    """Tell the kernel that the map is read at scattered places: no read-ahead around each page a
    lookup touches (else every star brings in ~100 kB of raster and the resident memory of a small
    catalogue grows towards the whole rasters)."""
    handle = getattr(arr, "_mmap", None)
    advice = getattr(mmap, "MADV_RANDOM", None)
    if handle is None or advice is None:
        return
    try:
        handle.madvise(advice)
    except (OSError, ValueError):   # pragma: no cover (platforms without madvise)
        pass


def save(where: Path | None, name: str, arr: np.ndarray) -> np.ndarray:
    """Store ``arr`` as ``name`` atomically; returns the stored copy memory-mapped (so the caller
    can drop its own), or ``arr`` itself when it cannot be stored."""
    if where is None:
        return arr
    try:
        if not where.is_dir():
            where.mkdir(parents=True, exist_ok=True)
            _write_stamp(where)
    except OSError:
        return arr
    if not _write_atomic(where, f"{name}.npy",
                         lambda fh: np.save(fh, np.ascontiguousarray(arr), allow_pickle=False)):
        return arr
    got = load(where, name, arr.shape, arr.dtype)
    return arr if got is None else got


def release(arr) -> None:
    """Drop the resident pages of a memory-mapped array (``madvise(MADV_DONTNEED)`` on a
    read-only file mapping: the pages are read again from the page cache when next touched).
    Does nothing for an array in ordinary memory."""
    base = arr
    while base is not None and getattr(base, "_mmap", None) is None:
        base = getattr(base, "base", None)
    handle = getattr(base, "_mmap", None) if base is not None else None
    advice = getattr(mmap, "MADV_DONTNEED", None)
    if handle is None or advice is None:
        return
    try:
        handle.madvise(advice)
    except (OSError, ValueError):   # pragma: no cover
        pass


# ---------------------------------------------------------------------------------------------
# use stamps and pruning
# ---------------------------------------------------------------------------------------------
#: a folder not used for this long is removed by :func:`prune`, whatever its key
IDLE_DAYS = 30.0
#: a folder of another package version or source (a stale key) is removed once unused this long:
#: another installation sharing the cache may still be using it
STALE_HOURS = 24.0
#: automatic pruning runs at most this often per cache folder (when a new folder is made)
PRUNE_EVERY_HOURS = 24.0
_PRUNED_STAMP = "last-prune"
_TRASH = ".trash-"


def _identity() -> dict:
    return {"format": FORMAT, "version": __version__, "source": source_hash()}


def _mark_used(where: Path) -> Path:
    """Record that this process uses ``where`` (the stamp's modification time), once per folder and
    process; a folder not made yet gets its stamp when its first file is stored."""
    if where not in _USED:
        _USED.add(where)
        try:
            os.utime(where / STAMP)
        except OSError:
            pass
    return where


_USED: set = set()


def _write_atomic(where: Path, name: str, data) -> bool:
    """Write ``name`` in ``where`` through a temporary file and a rename; ``data`` is bytes or a
    function that writes to the open file. False (nothing left behind) on any OS error."""
    tmp = None
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{name}-", suffix=".tmp", dir=where)
        with os.fdopen(fd, "wb") as fh:
            data(fh) if callable(data) else fh.write(data)
        os.replace(tmp, where / name)
        tmp = None
        return True
    except OSError:
        return False
    finally:
        if tmp is not None:
            try:
                os.unlink(tmp)
            except OSError:
                pass


def _write_stamp(where: Path) -> None:
    """A new keyed folder: what defines it, then (at most once a day) prune the cache."""
    _write_atomic(where, STAMP, json.dumps(_identity(), sort_keys=True).encode())
    _USED.add(where)
    maybe_prune()


def maybe_prune(now: float | None = None) -> list:
    """:func:`prune` if the last pruning of this cache folder is older than
    :data:`PRUNE_EVERY_HOURS` (or never happened); returns the folders removed."""
    import time

    root = cache_root()
    now = time.time() if now is None else now
    mark = root / _PRUNED_STAMP
    try:
        if now - mark.stat().st_mtime < PRUNE_EVERY_HOURS * 3600.0:
            return []
    except OSError:
        pass
    try:
        root.mkdir(parents=True, exist_ok=True)
        mark.touch()
        os.utime(mark, (now, now))
    except OSError:
        return []
    return prune(now=now)


def prune(*, idle_days: float = IDLE_DAYS, stale_hours: float = STALE_HOURS, now: float | None = None) -> list:
    """Remove cache folders that no current run needs; returns the paths removed.

    A keyed folder goes when it has not been used for ``idle_days`` (any key), or when it was made
    by another package version, another source of the map-building code or another storage format
    and has not been used for ``stale_hours`` (folders without a stamp, from before stamps, count
    as stale, aged by their own modification time). Left-overs of interrupted removals go too.

    Safe while other processes use the cache: a folder is first renamed (atomically) out of the
    lookup path, then deleted. A process that already mapped its files keeps reading them (on
    POSIX an unlinked file lives until its last mapping closes); one that looks it up afterwards
    finds nothing and builds the map again. A folder used within ``stale_hours`` is never removed,
    so an installation of another version running at the same time keeps its maps.
    """
    import shutil
    import time

    now = time.time() if now is None else now
    root = cache_root()
    me = _identity()
    removed = []
    for kind in KINDS:
        base = root / kind
        try:
            entries = list(base.iterdir())
        except OSError:
            continue
        for entry in entries:
            if entry.name.startswith(_TRASH):
                shutil.rmtree(entry, ignore_errors=True)
                continue
            if not entry.is_dir() or entry.name.startswith("."):
                continue
            stamp = entry / STAMP
            try:
                used = stamp.stat().st_mtime
                ident = json.loads(stamp.read_bytes())
            except (OSError, ValueError):
                try:
                    used, ident = entry.stat().st_mtime, None
                except OSError:
                    continue
            idle_h = (now - used) / 3600.0
            if idle_h < stale_hours or (ident == me and idle_h < 24.0 * idle_days):
                continue
            trash = base / f"{_TRASH}{entry.name}-{os.getpid()}"
            try:
                os.replace(entry, trash)
            except OSError:     # another process pruned or refreshed it first
                continue
            shutil.rmtree(trash, ignore_errors=True)
            _USED.discard(entry)
            removed.append(entry)
    return removed
