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
    cells between successive pairs are switched on through a cumulative sum along the row. The
    rows are taken ``rows`` at a time, each block only between its first and its last cut (the
    cells outside hold no cut and are outside), so the work follows the polygon's outline rather
    than its bounding box: a thin diagonal band (the main sequence, the white-dwarf band) costs
    little on a large grid.

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
        their boolean masks; cells of the raster in no window are outside. Empty if no cell
        centre is inside.
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
    first = np.r_[True, j[1:] != j[:-1]]
    rank = np.arange(total) - np.maximum.accumulate(np.where(first, np.arange(total), 0))
    sign = np.where(rank % 2 == 0, 1, -1).astype(np.int16)
    block = j // int(rows)
    cuts = np.r_[0, np.flatnonzero(block[1:] != block[:-1]) + 1, total]
    out = []
    for a, b in zip(cuts[:-1], cuts[1:]):
        jj, cc, ss = j[a:b], c[a:b], sign[a:b]
        j0, j1 = int(jj[0]), int(jj[-1]) + 1
        i0 = int(cc.min())
        # a row with an odd number of cuts (only from a degenerate polygon) stays on to the edge
        odd = (np.bincount(jj - j0, weights=ss) != 0).any()
        i1 = nx if odd else int(cc.max())
        if i1 <= i0:
            continue
        diff = np.zeros((j1 - j0, i1 - i0 + 1), dtype=np.int16)
        np.add.at(diff, (jj - j0, cc - i0), ss)
        inside = np.cumsum(diff[:, : i1 - i0], axis=1, dtype=np.int16) > 0
        out.append(((j0, j1, i0, i1), inside))
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
