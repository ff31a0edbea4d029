"""Where the names of regions and curves can go without covering data or other lines.

The axes are divided, in display space, into square cells of a few pixels. Three occupancy
layers are kept:

* ``points`` — cells covered by a plotted marker (dilated by the marker radius);
* one layer per drawn line (stage-map curves, constant-radius lines);
* ``text`` — cells covered by text already on the axes (caption, labels placed so far, an inner
  legend).

A candidate label is a rectangle (rotated along its curve for curve names, upright for region
names). It is sampled on a lattice no coarser than one cell, and a candidate is *free* when none
of its samples falls on an occupied cell of another line, a marker or a text. Among the free
candidates the one nearest to the preferred position wins; a label with no free candidate is not
drawn (the caller then names the curve in the legend instead). Everything is vectorised over the
candidates with numpy.

The layers depend on the pixel size of the axes, so placement runs after the figure layout has
been settled (``Figure.draw_without_rendering``).
"""

from __future__ import annotations

import numpy as np
from matplotlib.path import Path as MplPath

__all__ = ["Clutter", "text_size_px", "rotated_corners"]

_CELL_PX = 2.0
_PAD_PX = 2.0


def text_size_px(ax, text, **kw):
    """(width, height) in display pixels of ``text`` drawn unrotated with the properties ``kw``."""
    from .labels import renderer_of

    probe = ax.text(0, 0, text, transform=None, **kw)
    bb = probe.get_window_extent(renderer_of(ax.figure))
    probe.remove()
    return float(bb.width), float(bb.height)


def rotated_corners(cx, cy, w, h, angle_deg):
    """The four corners (4, 2) of a w x h rectangle centred on (cx, cy), rotated by angle_deg."""
    a = np.radians(angle_deg)
    c, s = np.cos(a), np.sin(a)
    local = np.array([(-w / 2, -h / 2), (w / 2, -h / 2), (w / 2, h / 2), (-w / 2, h / 2)])
    return np.column_stack([cx + local[:, 0] * c - local[:, 1] * s, cy + local[:, 0] * s + local[:, 1] * c])


class Clutter:
    """Occupancy of the axes by markers, lines and text, in display-space cells."""

    def __init__(self, ax, cell_px=_CELL_PX):
        from .labels import renderer_of

        self.ax = ax
        self.renderer = renderer_of(ax.figure)
        bb = ax.get_window_extent(self.renderer)
        self.x0, self.y0 = float(bb.x0), float(bb.y0)
        self.width, self.height = float(bb.width), float(bb.height)
        self.cell = float(cell_px)
        self.nx = max(int(np.ceil(self.width / self.cell)), 1)
        self.ny = max(int(np.ceil(self.height / self.cell)), 1)
        self.points = np.zeros((self.ny, self.nx), dtype=bool)
        self.text = np.zeros((self.ny, self.nx), dtype=bool)
        self.lines: dict[str, np.ndarray] = {}

    # -- building the layers ------------------------------------------------------------------
    def _cells(self, xy):
        """Cell indices (iy, ix) of display points, and which of them lie on the axes."""
        ix = np.floor((xy[:, 0] - self.x0) / self.cell).astype(np.int64)
        iy = np.floor((xy[:, 1] - self.y0) / self.cell).astype(np.int64)
        ok = (ix >= 0) & (ix < self.nx) & (iy >= 0) & (iy < self.ny)
        return iy, ix, ok

    def add_points(self, x, y, radius_px):
        """Mark markers at data positions (x, y) with the given radius in pixels."""
        x = np.asarray(x, dtype=float)
        y = np.asarray(y, dtype=float)
        ok = np.isfinite(x) & np.isfinite(y)
        if not ok.any():
            return
        xy = self.ax.transData.transform(np.column_stack([x[ok], y[ok]]))
        iy, ix, inside = self._cells(xy)
        grid = np.zeros_like(self.points)
        grid[iy[inside], ix[inside]] = True
        r = int(np.ceil(radius_px / self.cell))
        if r > 0:
            from scipy import ndimage

            yy, xx = np.mgrid[-r:r + 1, -r:r + 1]
            grid = ndimage.binary_dilation(grid, structure=(xx**2 + yy**2) <= r * r)
        self.points |= grid

    def add_line(self, key, x, y, width_px=1.0):
        """Mark the cells a line (data coordinates, NaN breaks it) passes through."""
        xy = self.ax.transData.transform(np.column_stack([np.asarray(x, float), np.asarray(y, float)]))
        grid = self.lines.setdefault(key, np.zeros_like(self.points))
        a, b = xy[:-1], xy[1:]
        ok = np.all(np.isfinite(a), axis=1) & np.all(np.isfinite(b), axis=1)
        a, b = a[ok], b[ok]
        if not len(a):
            return
        length = np.hypot(*(b - a).T)
        steps = np.maximum(np.ceil(length / (0.5 * self.cell)).astype(np.int64), 1)
        seg = np.repeat(np.arange(len(a)), steps)
        start = np.cumsum(steps) - steps
        t = (np.arange(steps.sum()) - np.repeat(start, steps) + 0.5) / np.repeat(steps, steps)
        pts = a[seg] + t[:, None] * (b[seg] - a[seg])
        pts = np.vstack([pts, a, b])
        iy, ix, inside = self._cells(pts)
        grid[iy[inside], ix[inside]] = True
        r = int(np.ceil(width_px / 2 / self.cell))
        if r > 0:
            from scipy import ndimage

            self.lines[key] = ndimage.binary_dilation(grid, iterations=r)

    def add_text_box(self, corners):
        """Mark a (possibly rotated) text rectangle given by its four display corners."""
        corners = np.asarray(corners, dtype=float)
        lo = np.floor((corners.min(axis=0) - (self.x0, self.y0)) / self.cell).astype(int) - 1
        hi = np.ceil((corners.max(axis=0) - (self.x0, self.y0)) / self.cell).astype(int) + 1
        lo = np.clip(lo, 0, (self.nx, self.ny))
        hi = np.clip(hi, 0, (self.nx, self.ny))
        if np.any(hi <= lo):
            return
        xs = self.x0 + (np.arange(lo[0], hi[0]) + 0.5) * self.cell
        ys = self.y0 + (np.arange(lo[1], hi[1]) + 0.5) * self.cell
        gx, gy = np.meshgrid(xs, ys)
        inside = MplPath(corners).contains_points(np.column_stack([gx.ravel(), gy.ravel()]),
                                                  radius=self.cell)
        self.text[lo[1]:hi[1], lo[0]:hi[0]] |= inside.reshape(gx.shape)

    def add_artist_extent(self, artist):
        """Mark the (unrotated) window extent of an artist (an inner legend, the caption)."""
        bb = artist.get_window_extent(self.renderer)
        self.add_text_box([(bb.x0, bb.y0), (bb.x1, bb.y0), (bb.x1, bb.y1), (bb.x0, bb.y1)])

    # -- testing candidates --------------------------------------------------------------------
    def _lattice(self, w, h):
        nu = max(int(np.ceil(w / self.cell)) + 1, 2)
        nv = max(int(np.ceil(h / self.cell)) + 1, 2)
        u, v = np.meshgrid(np.linspace(-w / 2, w / 2, nu), np.linspace(-h / 2, h / 2, nv))
        return u.ravel(), v.ravel()

    def hits(self, cx, cy, angle_deg, w, h, *, ignore=()):
        """Number of occupied samples of each candidate rectangle (inf where it leaves the axes).

        ``cx, cy, angle_deg`` are arrays (one entry per candidate) in display pixels / degrees;
        ``w, h`` the rectangle size; lines whose key is in ``ignore`` do not count.
        """
        cx = np.atleast_1d(np.asarray(cx, float))
        cy = np.atleast_1d(np.asarray(cy, float))
        a = np.radians(np.broadcast_to(np.asarray(angle_deg, float), cx.shape))
        u, v = self._lattice(w + 2 * _PAD_PX, h + 2 * _PAD_PX)
        c, s = np.cos(a)[:, None], np.sin(a)[:, None]
        px = cx[:, None] + u[None, :] * c - v[None, :] * s
        py = cy[:, None] + u[None, :] * s + v[None, :] * c
        ix = np.floor((px - self.x0) / self.cell).astype(np.int64)
        iy = np.floor((py - self.y0) / self.cell).astype(np.int64)
        outside = ((ix < 0) | (ix >= self.nx) | (iy < 0) | (iy >= self.ny)).any(axis=1)
        ix = np.clip(ix, 0, self.nx - 1)
        iy = np.clip(iy, 0, self.ny - 1)
        occ = self.points | self.text
        for key, grid in self.lines.items():
            if key not in ignore:
                occ |= grid
        count = occ[iy, ix].sum(axis=1).astype(float)
        count[outside] = np.inf
        return count

    # -- placing ------------------------------------------------------------------------------
    def along_line(self, key, x, y, w, h, *, prefer=0.5, margin_px=4.0):
        """Best free spot for a w x h label on the line ``key`` (data arrays x, y).

        Returns ``(x_data, y_data, angle_deg)`` of the label centre, or None when no spot along
        the visible line is free. The angle reads left to right on screen.
        """
        xy = self.ax.transData.transform(np.column_stack([np.asarray(x, float), np.asarray(y, float)]))
        ok = np.all(np.isfinite(xy), axis=1)
        ok &= ((xy[:, 0] > self.x0 + margin_px) & (xy[:, 0] < self.x0 + self.width - margin_px)
               & (xy[:, 1] > self.y0 + margin_px) & (xy[:, 1] < self.y0 + self.height - margin_px))
        best = None
        # each visible run of the line separately (a NaN or the axes edge breaks it)
        edges = np.flatnonzero(np.diff(np.r_[0, ok.astype(np.int8), 0]))
        for start, stop in zip(edges[::2], edges[1::2]):
            run = xy[start:stop]
            if len(run) < 2:
                continue
            seg = np.hypot(*np.diff(run, axis=0).T)
            s = np.r_[0.0, np.cumsum(seg)]
            total = s[-1]
            if total < w + 2 * margin_px:
                continue
            # candidates every cell along the run, far enough from its ends for the label
            sc = np.arange(w / 2 + margin_px, total - w / 2 - margin_px + 1e-9, self.cell)
            if not sc.size:
                continue
            cxy = np.column_stack([np.interp(sc, s, run[:, 0]), np.interp(sc, s, run[:, 1])])
            # direction of the chord over the label's length: the text follows the curve there
            p0 = np.column_stack([np.interp(sc - w / 2, s, run[:, 0]), np.interp(sc - w / 2, s, run[:, 1])])
            p1 = np.column_stack([np.interp(sc + w / 2, s, run[:, 0]), np.interp(sc + w / 2, s, run[:, 1])])
            d = p1 - p0
            flip = d[:, 0] < 0
            d[flip] *= -1
            angle = np.degrees(np.arctan2(d[:, 1], d[:, 0]))
            # the curve must stay within the text's height over its length (no sharp bends)
            mid = 0.5 * (p0 + p1)
            bend = np.hypot(*(cxy - mid).T)
            straight = bend < 0.35 * h
            cost = self.hits(cxy[:, 0], cxy[:, 1], angle, w, h, ignore=(key,))
            free = (cost == 0) & straight
            if not free.any():
                continue
            pos = (sc - sc[0]) / max(sc[-1] - sc[0], 1e-9)
            dist = np.abs(pos - prefer) + 0.001 * np.arange(len(sc)) / len(sc)
            dist[~free] = np.inf
            k = int(np.argmin(dist))
            score = dist[k] - total / 1e6  # on ties prefer the longer run
            if best is None or score < best[0]:
                best = (score, cxy[k], angle[k])
        if best is None:
            return None
        xd, yd = self.ax.transData.inverted().transform(best[1])
        return float(xd), float(yd), float(best[2])

    def inside_polygons(self, polygons, w, h, *, n_grid=90, accept=None):
        """Best free upright spot for a w x h label inside one of ``polygons`` (data coords).

        The whole rectangle must lie inside the polygon (and, with ``accept``, a function of data
        positions (n, 2) -> bool, its centre and corners must be accepted: a raster region with
        holes); among the free spots the one farthest from the polygon edges wins. Returns
        ``(x_data, y_data)`` or None.
        """
        to_data = self.ax.transData.inverted()
        best = None
        u = (np.arange(n_grid) + 0.5) / n_grid
        gx, gy = np.meshgrid(self.x0 + u * self.width, self.y0 + u * self.height)
        grid = np.column_stack([gx.ravel(), gy.ravel()])
        for poly in polygons:
            poly = np.asarray(poly, dtype=float)
            poly = poly[np.all(np.isfinite(poly), axis=1)]
            if len(poly) < 3:
                continue
            disp = self.ax.transData.transform(poly)
            # the outline simplified to within a fraction of a pixel: containment tests stay exact
            # to far less than the label padding and are much faster on long outlines
            path = MplPath(disp).cleaned(simplify=True)
            path = MplPath(path.vertices[path.codes != MplPath.STOP][:-1] if path.codes is not None else path.vertices)
            # all four corners (and the centre) inside the polygon
            lo, hi = disp.min(axis=0), disp.max(axis=0)
            cand = grid[np.all((grid >= lo + (w / 2, h / 2)) & (grid <= hi - (w / 2, h / 2)), axis=1)]
            for dx, dy in ((0.0, 0.0), (-w / 2, -h / 2), (w / 2, -h / 2), (w / 2, h / 2), (-w / 2, h / 2)):
                if not len(cand):
                    break
                keep = path.contains_points(cand + (dx, dy))
                if accept is not None:
                    keep &= np.asarray(accept(to_data.transform(cand + (dx, dy))), dtype=bool)
                cand = cand[keep]
            if not len(cand):
                continue
            cost = self.hits(cand[:, 0], cand[:, 1], 0.0, w, h)
            free = cost == 0
            if not free.any():
                continue
            cand = cand[free]
            # clearance from the polygon edges (decimated outline is accurate enough)
            edge = disp[:: max(int(np.ceil(len(disp) / 400)), 1)]
            a, b = edge, np.roll(edge, -1, axis=0)
            ab = b - a
            den = np.where((ab**2).sum(1) > 0, (ab**2).sum(1), 1.0)
            t = np.clip(((cand[:, None, :] - a[None]) * ab[None]).sum(2) / den[None], 0, 1)
            near = a[None] + t[..., None] * ab[None]
            clear = np.sqrt(((cand[:, None, :] - near) ** 2).sum(2)).min(1)
            k = int(np.argmax(clear))
            if best is None or clear[k] > best[0]:
                best = (clear[k], cand[k])
        if best is None:
            return None
        xd, yd = self.ax.transData.inverted().transform(best[1])
        return float(xd), float(yd)
