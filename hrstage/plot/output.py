"""Writing figures to PNG, PDF or SVG, atomically and without overwriting by accident."""

from __future__ import annotations

from pathlib import Path

from ..errors import HrstageInputError

__all__ = ["write_figure", "FIGURE_FORMATS"]

#: Suffix -> matplotlib format name.
FIGURE_FORMATS = {".png": "png", ".pdf": "pdf", ".svg": "svg"}


def _figure_of(obj):
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure, SubFigure

    if isinstance(obj, Axes):
        obj = obj.figure
    if isinstance(obj, SubFigure):
        obj = obj.figure
    if not isinstance(obj, Figure):
        raise HrstageInputError(f"write_figure needs a matplotlib Axes or Figure, not {type(obj).__name__}")
    return obj


def write_figure(ax_or_fig, path, *, overwrite=False, dpi=200):
    """Save a figure; the format comes from the suffix (``.png``, ``.pdf``, ``.svg``).

    The file is written to a temporary name in the same directory and renamed into place, so a
    reader never sees a half-written file and an interrupted write leaves the old file intact.
    PDF and SVG carry no creation date, so the same figure gives the same bytes.

    Parameters
    ----------
    ax_or_fig : matplotlib.axes.Axes or matplotlib.figure.Figure
    path : str or pathlib.Path
    overwrite : bool
        Replace an existing file (default: refuse).
    dpi : float
        Resolution of PNG output (and of rasterised layers in PDF/SVG).

    Returns
    -------
    pathlib.Path
        The path written.

    Raises
    ------
    HrstageInputError
        Unknown suffix, missing directory, or existing file without ``overwrite=True``.
    """
    fig = _figure_of(ax_or_fig)
    path = Path(path)
    fmt = FIGURE_FORMATS.get(path.suffix.lower())
    if fmt is None:
        raise HrstageInputError(
            f"{path.name}: unknown figure format {path.suffix!r}; expected one of {', '.join(FIGURE_FORMATS)}"
        )
    parent = path.parent if str(path.parent) else Path(".")
    if not parent.is_dir():
        raise HrstageInputError(f"{path}: directory {parent} does not exist")
    if path.exists() and not overwrite:
        raise HrstageInputError(f"{path} exists; pass overwrite=True to replace it")
    from .. import __version__

    metadata = {"png": {"Software": f"hrstage {__version__}"},
                "pdf": {"Creator": f"hrstage {__version__}", "CreationDate": None},
                "svg": {"Creator": f"hrstage {__version__}", "Date": None}}[fmt]
    from ..catalog.atomic import atomic_output

    # temporary file beside the target, renamed when complete (the catalogue writer's mechanism)
    with atomic_output(path, overwrite=overwrite) as tmp:
        with open(tmp, "wb") as fh:
            fig.savefig(fh, format=fmt, dpi=dpi, metadata=metadata)
    return path
