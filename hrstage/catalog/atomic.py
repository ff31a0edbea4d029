"""Atomic output: write to a temporary file beside the target, rename when complete.

A reader never sees a half-written catalogue: the data go to a hidden temporary file in the
output's own folder (same file system, so the final rename is atomic) and only a complete file is
moved into place. On any failure the temporary file is removed and nothing is left behind. An
existing file is replaced only when ``overwrite=True``; an input file is never a valid output.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path
from typing import Iterable, Iterator

from ..errors import HrstageInputError
from ..interrupts import commit_section as _commit_section

#: Marker in the names of our temporary files (tests look for leftovers with it).
TEMP_MARK = ".hrstage-partial-"


def _current_umask() -> int:
    """The process umask, read without changing it where the system allows (Linux /proc)."""
    try:
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    except (OSError, ValueError, IndexError):
        pass
    mask = os.umask(0o022)       # elsewhere: set and restore at once (not thread-safe, brief)
    os.umask(mask)
    return mask


def output_mode(path) -> int:
    """Permission bits an output at ``path`` should get.

    The mode of the file being replaced when there is one, otherwise what ``open(path, "w")``
    would give a new file (``0o666`` minus the umask). Temporary files from :mod:`tempfile` are
    created ``0o600``; writers call this before renaming them into place.
    """
    p = Path(path)
    try:
        return p.stat().st_mode & 0o7777
    except OSError:
        return 0o666 & ~_current_umask()


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.exists() and b.exists() and os.path.samefile(a, b)
    except OSError:
        return False


def check_output_path(path, *, overwrite: bool = False, inputs: Iterable = ()) -> Path:
    """Validate an output path before any work is done.

    Parameters
    ----------
    path : path-like
        Where the output will go.
    overwrite : bool, default False
        Allow replacing an existing file.
    inputs : iterable of path-like
        Input files; the output may never be one of them (even with ``overwrite``).

    Returns
    -------
    pathlib.Path

    Raises
    ------
    HrstageInputError
        If the output is an input, exists without ``overwrite``, is a folder, or its folder is
        missing or not writable.
    """
    out = Path(path)
    for inp in inputs:
        inp = Path(inp)
        if out.resolve() == inp.resolve() or _same_file(out, inp):
            raise HrstageInputError(f"output {out} is the input file; choose another output name "
                                    "(the input is never modified)")
    if out.is_dir():
        raise HrstageInputError(f"output {out} is a folder, expected a file name")
    if not out.parent.exists() and str(out.parent) not in ("", "."):
        raise HrstageInputError(f"folder of output {out} does not exist")
    if out.exists() and not overwrite:
        raise HrstageInputError(f"output {out} already exists; pass overwrite=True to replace it",
                                cli=f"output {out} already exists; pass --overwrite to replace it")
    folder = out.parent if str(out.parent) else Path(".")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise HrstageInputError(f"cannot write {out}: no permission to create files in folder {folder}")
    return out


@contextlib.contextmanager
def atomic_output(path, *, overwrite: bool = False, inputs: Iterable = ()) -> Iterator[Path]:
    """Context manager yielding a temporary path that becomes ``path`` on success.

    The temporary file lives in the same folder and keeps the target's suffix (so writers that
    choose the format from the suffix still work). If the body raises, the temporary file is
    deleted and the exception propagates; the target is untouched.

    Examples
    --------
    >>> with atomic_output("out.ecsv", overwrite=True) as tmp:   # doctest: +SKIP
    ...     table.write(tmp, format="ascii.ecsv")
    """
    out = check_output_path(path, overwrite=overwrite, inputs=inputs)
    folder = out.parent if str(out.parent) else Path(".")
    suffix = "".join(out.suffixes) or ""
    tmp = None
    try:
        try:
            fd, tmp_name = tempfile.mkstemp(prefix="." + out.name + TEMP_MARK, suffix=suffix, dir=folder)
            tmp = Path(tmp_name)    # at once: a Ctrl-C from here on still removes the file
        except OSError as exc:      # read-only or special file system, no permission: the user's choice
            raise HrstageInputError(f"cannot write {out}: cannot create a file in folder {folder} "
                                    f"({exc.strerror or exc})") from None
        os.close(fd)
        yield tmp
        os.chmod(tmp, output_mode(out))
        with _commit_section():
            _put_in_place(tmp, out, overwrite)
    finally:
        if tmp is not None and tmp.exists():
            with contextlib.suppress(OSError):
                tmp.unlink()


def _put_in_place(tmp: Path, out: Path, overwrite: bool) -> None:
    if overwrite:
        os.replace(tmp, out)
        return
    # link + unlink refuses to replace a file that appeared while we were writing
    try:
        os.link(tmp, out)
    except FileExistsError:
        raise HrstageInputError(
            f"output {out} appeared while writing; pass overwrite=True to replace it",
            cli=f"output {out} appeared while writing; pass --overwrite to replace it") from None
    except OSError:
        if out.exists():
            raise HrstageInputError(f"output {out} already exists") from None
        os.replace(tmp, out)
    else:
        tmp.unlink()
