"""The raster lookup grid: polygons filled into an int8 grid of stage codes, and fast lookups.

Locating a star is index arithmetic and one gather, so that millions of stars per second can be
labelled; the exact curves stay in :class:`~hrstage.stagemap.StageMap` for drawing, explanations
and boundary distances.

Grid: cell ``(j, i)`` covers ``[t0 + i dt, t0 + (i + 1) dt) x [l0 + j dl, l0 + (j + 1) dl)`` in
(log Teff, log L). The stored array has a one-cell border of ``UNCLASSIFIED`` so that out-of-range
and NaN positions fall on the border after clipping, without a separate test.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..stages import UNCLASSIFIED


@dataclass(frozen=True)
class Grid:
    """Extent and resolution of a raster in (log Teff, log L)."""

    t0: float = 3.30
    t1: float = 5.30
    l0: float = -6.0
    l1: float = 7.0
    dt: float = 0.001
    dl: float = 0.0025

    @property
    def nx(self) -> int:
        return int(round((self.t1 - self.t0) / self.dt))

    @property
    def ny(self) -> int:
        return int(round((self.l1 - self.l0) / self.dl))

    def centres(self):
        """Cell-centre coordinates (logt of the nx columns, logl of the ny rows)."""
        return (
            self.t0 + (np.arange(self.nx) + 0.5) * self.dt,
            self.l0 + (np.arange(self.ny) + 0.5) * self.dl,
        )

    def coarsen(self, fx: int, fy: int) -> "Grid":
        """The grid with cells ``fx`` times wider in log T and ``fy`` times taller in log L."""
        return Grid(self.t0, self.t1, self.l0, self.l1, self.dt * fx, self.dl * fy)


def fill_polygon(poly: np.ndarray, grid: Grid) -> np.ndarray:
    """Boolean mask (ny, nx) of the cells whose centre lies inside a closed polygon.

    Even-odd scan-line fill (see :func:`fill_polygon_strips`, which does the work on narrow
    windows around the polygon only); this puts the strips into a full-size mask.

    Parameters
    ----------
    poly : ndarray (K, 2)
        Vertices (log Teff, log L); closing edge implied. NaN vertices are not allowed.
    grid : Grid
    """
    mask = np.zeros((grid.ny, grid.nx), dtype=bool)
    for (j0, j1, i0, i1), sub in fill_polygon_strips(poly, grid):
        mask[j0:j1, i0:i1] = sub
    return mask


#: rows of cell centres per strip of :func:`fill_polygon_strips`
STRIP_ROWS = 128


def fill_polygon_strips(poly: np.ndarray, grid: Grid, rows: int = STRIP_ROWS) -> list:
    """Cells whose centre lies inside a closed polygon, as masks of narrow windows (strips).

    Even-odd scan-line fill, vectorised: every edge is cut with the rows of cell centres it spans
    (half-open in y so that vertices are counted once), the cuts of each row are sorted and the
    cells between successive pairs are switched on. The rows are taken ``rows`` at a time, each
    block only between its first and its last cut (the cells outside hold no cut and are
    outside), so the work follows the polygon's outline rather than its bounding box: a thin
    diagonal band (the main sequence, the white-dwarf band) costs little on a large grid. The
    masks of all blocks are written at once, as alternating off/on runs between the cuts
    expanded by one ``np.repeat``, into one buffer that the returned masks are views of.

    Parameters
    ----------
    poly : ndarray (K, 2)
        Vertices (log Teff, log L); closing edge implied. NaN vertices are not allowed.
    grid : Grid
    rows : int
        Rows per strip.

    Returns
    -------
    list of ((j0, j1, i0, i1), mask)
        Disjoint windows ``rows j0:j1, columns i0:i1`` of the (ny, nx) raster, top to bottom, and
        their boolean masks (writable views of one buffer, not overlapping); cells of the raster
        in no window are outside. Empty if no cell centre is inside.
    """
    poly = np.asarray(poly, dtype=float)
    nx, ny = grid.nx, grid.ny
    x = (poly[:, 0] - grid.t0) / grid.dt - 0.5  # in units of cell-centre indices
    y = (poly[:, 1] - grid.l0) / grid.dl - 0.5
    x1, y1 = x, y
    x2, y2 = np.roll(x, -1), np.roll(y, -1)
    ylo, yhi = np.minimum(y1, y2), np.maximum(y1, y2)
    jlo = np.clip(np.ceil(ylo), 0, ny).astype(np.int64)
    jhi = np.clip(np.ceil(yhi), 0, ny).astype(np.int64)  # exclusive
    count = np.where(y1 != y2, jhi - jlo, 0)
    count = np.maximum(count, 0)
    total = int(count.sum())
    if total == 0:
        return []
    edge = np.repeat(np.arange(len(x)), count)
    start = np.repeat(np.cumsum(count) - count, count)
    j = jlo[edge] + (np.arange(total) - start)
    xc = x1[edge] + (j - y1[edge]) * (x2[edge] - x1[edge]) / (y2[edge] - y1[edge])
    order = np.lexsort((xc, j))
    j, xc = j[order], xc[order]
    # pairs (0,1), (2,3), ... within each row: the rule above gives an even count per row
    c = np.clip(np.ceil(xc), 0, nx).astype(np.int64)
    first = np.flatnonzero(np.r_[True, j[1:] != j[:-1]])  # first cut of each row
    row_j = j[first]
    odd_row = (np.diff(np.r_[first, total]) % 2) == 1
    block = j // int(rows)
    bstart = np.flatnonzero(np.r_[True, block[1:] != block[:-1]])  # first cut of each strip
    bidx = np.cumsum(np.r_[True, block[1:] != block[:-1]]) - 1  # strip of each cut
    j0 = j[bstart]
    j1 = j[np.r_[bstart[1:], total] - 1] + 1
    i0 = np.minimum.reduceat(c, bstart)
    # a row with an odd number of cuts (only from a degenerate polygon) stays on to the edge
    odd = np.zeros(len(bstart), dtype=bool)
    odd[bidx[first[odd_row]]] = True
    i1 = np.where(odd, nx, np.maximum.reduceat(c, bstart))
    keep = i1 > i0
    w = np.where(keep, i1 - i0, 0)
    size = w * (j1 - j0)
    off = np.cumsum(size) - size
    # the mask is on between cut 0 and 1, 2 and 3, ... of each row: the parity of the cuts at or
    # before a cell. All strips are laid end to end in one flat buffer; every cut toggles the
    # parity at its flat position (a cut at the window's right edge falls on the next row's
    # first cell, after an even count: no effect there). A row with an odd count gets one more
    # toggle at its end, so that every row, and every strip, leaves the parity off.
    kc = keep[bidx]
    b = bidx[kc]
    pos = off[b] + (j[kc] - j0[b]) * w[b] + (c[kc] - i0[b])
    ob = bidx[first[odd_row]]
    ob_keep = keep[ob]
    ob = ob[ob_keep]
    extra = off[ob] + (row_j[odd_row][ob_keep] - j0[ob] + 1) * w[ob]
    if len(extra):
        pos = np.sort(np.r_[pos, extra])
    seg = np.diff(np.r_[0, pos, int(size.sum())])
    buf = np.repeat((np.arange(len(seg)) & 1).astype(bool), seg)
    out = []
    for k in np.flatnonzero(keep):
        o, n = int(off[k]), int(size[k])
        window = (int(j0[k]), int(j1[k]), int(i0[k]), int(i1[k]))
        out.append((window, buf[o : o + n].reshape(window[1] - window[0], window[3] - window[2])))
    return out


def _level_segments(lengths: np.ndarray, unit: int, cap: int):
    """Run-length code of the levels ``min(d // unit, cap)`` inside runs of the given lengths.

    ``d`` is a cell's distance to the nearer end of its run (0 for the first and the last cell).
    A run of ``n`` cells has ``ceil(n / 2)`` cells on its first half (d = 0, 1, ... rising) and
    ``floor(n / 2)`` on its second (d falling back to 0), so each run is 2 (cap + 1) segments
    of constant level: 0 .. cap then cap .. 0, of lengths clipped to ``unit`` (some empty).
    Returns (levels, counts) to be expanded with ``np.repeat``.
    """
    n = np.asarray(lengths, dtype=np.int64)[:, None]
    lo = np.arange(cap, dtype=np.int64)[None, :] * unit  # first d of each level below the cap
    first, second = (n + 1) // 2, n // 2
    counts = np.concatenate(
        [
            np.clip(first - lo, 0, unit),
            np.maximum(first - unit * cap, 0),
            np.maximum(second - unit * cap, 0),
            np.clip(second - lo, 0, unit)[:, ::-1],
        ],
        axis=1,
    )
    up = np.arange(cap + 1, dtype=np.uint8)
    levels = np.tile(np.r_[up, up[::-1]], len(n))
    return levels, counts.ravel()


def _expand_runs(starts: np.ndarray, total: int, unit: int, cap: int) -> np.ndarray:
    """Levels of ``total`` cells (flat) cut into runs beginning at the sorted ``starts`` (0 first)."""
    lengths = np.diff(np.r_[starts, total])
    levels, counts = _level_segments(lengths, unit, cap)
    return np.repeat(levels, counts)


def run_levels(values: np.ndarray, unit: int = 8, cap: int = 15, tile: int = 512, out=None) -> np.ndarray:
    """How far each cell's value runs on unchanged along each axis, in units of ``unit`` cells.

    For each cell of the 2-D array: ``kx = min(d_x // unit, cap)`` with ``d_x`` the number of
    cells between it and the nearer end of its run of equal values along axis 1 (the array edge
    ends a run), ``ky`` the same along axis 0; returned as uint8 ``kx | ky << 4`` (``cap`` at most
    15). Every cell within ``unit * kx`` cells left and right of a cell (``unit * ky`` up and down)
    has its value.

    Works on the positions where the value changes (few on a stage raster): the runs are cut
    there and each run is written as a short run-length code of levels, expanded with one
    ``np.repeat`` per axis; the axis-0 levels come out column by column and are merged in tiles
    of ``tile`` x ``tile`` cells, so no whole-array transposed copy is made. ``out``: a uint8
    array of the same shape to write into (e.g. the interior of a padded raster).
    """
    a = np.asarray(values)
    if a.ndim != 2:
        raise ValueError("run_levels: a 2-D array is needed")
    if not 0 <= cap <= 15 or unit < 1:
        raise ValueError("run_levels: need unit >= 1 and 0 <= cap <= 15")
    ny, nx = a.shape
    if out is None:
        out = np.empty((ny, nx), dtype=np.uint8)
    elif out.shape != a.shape or out.dtype != np.uint8:
        raise ValueError("run_levels: out must be a uint8 array of the input's shape")
    total = ny * nx
    if total == 0:
        return out
    # along axis 1, in row-major order: every row starts a run, and so does every change
    k = np.flatnonzero(a[:, 1:] != a[:, :-1]).astype(np.int64)  # index in the (ny, nx - 1) array
    starts = np.r_[np.arange(ny, dtype=np.int64) * nx, k + k // max(nx - 1, 1) + 1]
    starts.sort()
    kx = _expand_runs(starts, total, unit, cap).reshape(ny, nx)
    # along axis 0, in column-major order (transposed layout)
    k = np.flatnonzero(a[1:] != a[:-1]).astype(np.int64)  # index in the (ny - 1, nx) array
    starts = np.r_[np.arange(nx, dtype=np.int64) * ny, (k % nx) * ny + k // nx + 1]
    starts.sort()
    kyt = _expand_runs(starts, total, unit, cap).reshape(nx, ny)
    np.left_shift(kyt, 4, out=kyt)
    for j in range(0, ny, tile):
        for i in range(0, nx, tile):
            np.bitwise_or(
                kx[j : j + tile, i : i + tile], kyt[i : i + tile, j : j + tile].T, out=out[j : j + tile, i : i + tile]
            )
    return out


class Lookup:
    """A padded raster with a fast (log T, log L) -> cell gather.

    Parameters
    ----------
    values : ndarray (ny, nx)
        Cell values (stage codes, masses, ...).
    grid : Grid
    fill : scalar
        Value of the border (what out-of-range and NaN positions get).
    """

    def __init__(self, values: np.ndarray, grid: Grid, fill):
        ny, nx = values.shape
        if (ny, nx) != (grid.ny, grid.nx):
            raise ValueError("raster shape does not match its grid")
        padded = np.full((ny + 2, nx + 2), fill, dtype=values.dtype)
        padded[1:-1, 1:-1] = values
        self._adopt(padded, grid)

    @staticmethod
    def padded_array(grid: Grid, fill, dtype) -> np.ndarray:
        """A new (ny + 2, nx + 2) array filled with ``fill``, to be written in place (its
        ``[1:-1, 1:-1]`` interior) and then wrapped with :meth:`from_padded` without a copy."""
        return np.full((grid.ny + 2, grid.nx + 2), fill, dtype=dtype)

    @classmethod
    def from_padded(cls, padded: np.ndarray, grid: Grid) -> "Lookup":
        """Wrap a C-contiguous (ny + 2, nx + 2) array whose one-cell border already holds the
        fill value (no copy: the lookup keeps a reference to it)."""
        if padded.shape != (grid.ny + 2, grid.nx + 2) or not padded.flags.c_contiguous:
            raise ValueError("padded raster: shape does not match its grid or not C-contiguous")
        self = cls.__new__(cls)
        self._adopt(padded, grid)
        return self

    def _adopt(self, padded: np.ndarray, grid: Grid):
        ny, nx = padded.shape[0] - 2, padded.shape[1] - 2
        self.grid = grid
        self.width = nx + 2
        self.flat = padded.ravel()
        self.values = padded[1:-1, 1:-1]
        # x index (padded) = floor(logt / dt + ax), clipped to [0, nx + 1]
        self.ax = 1.0 - grid.t0 / grid.dt
        self.ay = 1.0 - grid.l0 / grid.dl
        self.inv_dt = 1.0 / grid.dt
        self.inv_dl = 1.0 / grid.dl
        self.xmax = float(nx + 1)
        self.ymax = float(ny + 1)

    def index(self, logt, logl, dtype=np.float64) -> np.ndarray:
        """Flat padded indices (int64) of the cells; NaN and out-of-range go to the border."""
        x = np.asarray(logt, dtype=dtype) * dtype(self.inv_dt)
        x += dtype(self.ax)
        np.fmax(x, 0.0, out=x)
        np.fmin(x, self.xmax, out=x)
        y = np.asarray(logl, dtype=dtype) * dtype(self.inv_dl)
        y += dtype(self.ay)
        np.fmax(y, 0.0, out=y)
        np.fmin(y, self.ymax, out=y)
        iy = y.astype(np.int64)
        iy *= self.width
        iy += x.astype(np.int64)
        return iy

    def __call__(self, logt, logl) -> np.ndarray:
        """Cell values at the positions (any broadcastable shapes)."""
        logt, logl = np.broadcast_arrays(np.asarray(logt, float), np.asarray(logl, float))
        out = np.empty(logt.shape, dtype=self.flat.dtype)
        ft, fl, fo = logt.ravel(), logl.ravel(), out.reshape(-1)
        step = 1 << 16
        for s in range(0, ft.size, step):
            idx = self.index(ft[s : s + step], fl[s : s + step])
            np.take(self.flat, idx, out=fo[s : s + step])
        return out


UNCLASSIFIED_CODE = np.int8(UNCLASSIFIED)
