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
from pathlib import Path

import numpy as np

from .._version import __version__

#: layout version of the stored files; bump when what is stored, or how, changes
FORMAT = 1

#: environment variables: the cache folder, and the switch
ENV_DIR = "HRSTAGE_CACHE_DIR"
ENV_SWITCH = "HRSTAGE_MAP_CACHE"

_OFF = {"0", "off", "no", "false"}

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


def map_key(sm) -> str:
    """Folder name of one map's files: its [Fe/H] and a hash of everything that defines it."""
    g = sm.grid
    spec = {
        "format": FORMAT,
        "version": __version__,
        "source": source_hash(),
        "numpy": ".".join(np.__version__.split(".")[:2]),
        "grid": [g.t0, g.t1, g.l0, g.l1, g.dt, g.dl],
        "mass_factor": list(sm.mass_factor),
        "feh": round(float(sm.feh), 3),
        "params": sm.params.as_dict(),
    }
    digest = hashlib.sha256(json.dumps(spec, sort_keys=True, default=repr).encode()).hexdigest()[:32]
    return f"feh{float(sm.feh):+.3f}-{digest}"


def folder(sm) -> Path | None:
    """The folder of one map's files, or None when the cache is off."""
    if not enabled():
        return None
    return cache_root() / "stagemaps" / map_key(sm)


def load(where: Path | None, name: str, shape=None, dtype=None) -> np.ndarray | None:
    """The stored array ``name`` (read-only memory map), or None if absent or not of the
    ``shape`` and ``dtype`` given."""
    if where is None:
        return None
    path = where / f"{name}.npy"
    try:
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
    tmp = None
    try:
        where.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=f".{name}-", suffix=".tmp", dir=where)
        with os.fdopen(fd, "wb") as fh:
            np.save(fh, np.ascontiguousarray(arr), allow_pickle=False)
        os.replace(tmp, where / f"{name}.npy")
        tmp = None
    except OSError:
        return arr
    finally:
        if tmp is not None:
            try:
                os.unlink(tmp)
            except OSError:
                pass
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
