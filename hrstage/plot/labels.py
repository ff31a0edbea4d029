"""Greedy placement of star labels without overlaps.

For each label, in the order given, we try a set of candidate positions around its star (eight
directions on three rings of increasing distance) and keep the best one that

* lies entirely inside the axes,
* does not overlap a label already placed,

scored by the number of plotted points and other texts it would cover (fewer is better) and by
its distance from the star (nearer is better). Beyond the first ring a thin leader line joins
label and star. Boxes are computed in display space from the measured size of the text, once the
figure layout is settled, and all candidates of one label are tested at once with numpy.
A label that finds no free place is left out (and counted in the warning), never overlapped.
"""

from __future__ import annotations

import warnings

import numpy as np

from ..errors import HrstageWarning

__all__ = ["place_labels", "renderer_of", "boxes_overlap"]

# (dx, dy) unit directions, preferred order: right, upper right, above, upper left, left, ...
_DIRS = np.array([(1, 0), (1, 1), (0, 1), (-1, 1), (-1, 0), (-1, -1), (0, -1), (1, -1)], dtype=float)
_RINGS_PT = (6.0, 16.0, 30.0)
_PAD_PX = 1.5


def renderer_of(fig):
    """A renderer for measuring text (the figure's canvas renderer, else a temporary Agg one)."""
    canvas = fig.canvas
    if hasattr(canvas, "get_renderer"):
        return canvas.get_renderer()
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    return FigureCanvasAgg(fig).get_renderer()


def boxes_overlap(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Pairwise overlap of boxes ``a`` (n, 4) and ``b`` (m, 4) as [x0, y0, x1, y1] -> (n, m) bool."""
    a = np.asarray(a, dtype=float).reshape(-1, 4)
    b = np.asarray(b, dtype=float).reshape(-1, 4)
    return (
        (a[:, None, 0] < b[None, :, 2])
        & (a[:, None, 2] > b[None, :, 0])
        & (a[:, None, 1] < b[None, :, 3])
        & (a[:, None, 3] > b[None, :, 1])
    )


def _text_boxes(ax, renderer) -> np.ndarray:
    boxes = []
    for t in ax.texts:
        if t.get_visible() and t.get_text():
            bb = t.get_window_extent(renderer)
            boxes.append((bb.x0, bb.y0, bb.x1, bb.y1))
    return np.array(boxes, dtype=float).reshape(-1, 4)


def place_labels(ax, x, y, texts, *, points_xy=None, fontsize="small", colour="#1a1a1a",
                 point_radius_px=4.0, gid="star_label"):
    """Place labels for the given stars on ``ax`` without overlaps.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
        Axes whose limits and layout are final.
    x, y : array_like
        Data coordinates of the stars to label.
    texts : sequence of str
        The labels (plain text; no mathtext is interpreted).
    points_xy : (n, 2) array_like, optional
        Data coordinates of all plotted points, to be avoided where possible.
    fontsize, colour : matplotlib text properties
    point_radius_px : float
        Half-size in display pixels of the box kept free around each plotted point.
    gid : str
        Group id set on every label (for finding them in the Artist tree).

    Returns
    -------
    list of matplotlib.text.Annotation
        The labels placed (labels that found no free place are skipped, with a warning).
    """
    x = np.asarray(x, dtype=float).ravel()
    y = np.asarray(y, dtype=float).ravel()
    texts = [str(t) for t in texts]
    if not (x.size == y.size == len(texts)):
        raise ValueError("x, y and texts must have the same length")
    fig = ax.figure
    renderer = renderer_of(fig)
    px_per_pt = fig.dpi / 72.0
    axbb = ax.get_window_extent(renderer)
    anchors = ax.transData.transform(np.column_stack([x, y]))

    if points_xy is not None and len(points_xy):
        pts = ax.transData.transform(np.asarray(points_xy, dtype=float).reshape(-1, 2))
        pts = pts[np.all(np.isfinite(pts), axis=1)]
    else:
        pts = np.empty((0, 2))
    soft = _text_boxes(ax, renderer)
    placed_boxes = np.empty((0, 4))
    out = []
    skipped = 0

    for i, text in enumerate(texts):
        ax_, ay_ = anchors[i]
        if not (np.isfinite(ax_) and np.isfinite(ay_)) or not axbb.contains(ax_, ay_):
            skipped += 1
            continue
        probe = ax.text(0, 0, text, fontsize=fontsize, transform=None, parse_math=False)
        bb = probe.get_window_extent(renderer)
        probe.remove()
        w, h = bb.width + 2 * _PAD_PX, bb.height + 2 * _PAD_PX

        cands, meta = [], []
        for ring, r_pt in enumerate(_RINGS_PT):
            r = r_pt * px_per_pt
            for dx, dy in _DIRS:
                norm = np.hypot(dx, dy)
                ox, oy = dx / norm * r, dy / norm * r
                # the text box touches the offset point on the side facing the star
                x0 = ax_ + ox - (w if dx < 0 else (w / 2 if dx == 0 else 0.0))
                y0 = ay_ + oy - (h if dy < 0 else (h / 2 if dy == 0 else 0.0))
                cands.append((x0, y0, x0 + w, y0 + h))
                meta.append((ring, ox, oy, dx, dy))
        cands = np.array(cands)
        inside = (
            (cands[:, 0] >= axbb.x0) & (cands[:, 2] <= axbb.x1) & (cands[:, 1] >= axbb.y0) & (cands[:, 3] <= axbb.y1)
        )
        free = ~boxes_overlap(cands, placed_boxes).any(axis=1) if placed_boxes.size else np.ones(len(cands), bool)
        ok = inside & free
        if not ok.any():
            skipped += 1
            continue
        # soft costs: plotted points covered (other than the star itself) and other texts crossed
        if pts.size:
            lo = cands[:, :2].min(axis=0) - point_radius_px
            hi = cands[:, 2:].max(axis=0) + point_radius_px
            near = pts[np.all((pts >= lo) & (pts <= hi), axis=1)]
            pbox = np.column_stack([near - point_radius_px, near + point_radius_px])
            covered = boxes_overlap(cands, pbox).sum(axis=1)
        else:
            covered = np.zeros(len(cands))
        crossed = boxes_overlap(cands, soft).sum(axis=1) if soft.size else np.zeros(len(cands))
        rings = np.array([m[0] for m in meta], dtype=float)
        order = np.arange(len(cands)) % len(_DIRS)
        cost = covered + 3.0 * crossed + 2.5 * rings + 0.05 * order
        cost[~ok] = np.inf
        k = int(np.argmin(cost))
        ring, ox, oy, dx, dy = meta[k]
        ha = "left" if dx > 0 else ("right" if dx < 0 else "center")
        va = "bottom" if dy > 0 else ("top" if dy < 0 else "center")
        arrow = None
        if ring > 0:
            arrow = dict(arrowstyle="-", lw=0.5, color="0.35", shrinkA=0.0, shrinkB=point_radius_px * 0.6)
        ann = ax.annotate(
            text,
            xy=(x[i], y[i]),
            xytext=((ox + (_PAD_PX if dx > 0 else -_PAD_PX if dx < 0 else 0.0)) / px_per_pt,
                    (oy + (_PAD_PX if dy > 0 else -_PAD_PX if dy < 0 else 0.0)) / px_per_pt),
            textcoords="offset points",
            ha=ha,
            va=va,
            fontsize=fontsize,
            color=colour,
            arrowprops=arrow,
            annotation_clip=False,
            parse_math=False,
            zorder=6,
        )
        ann.set_gid(gid)
        out.append(ann)
        placed_boxes = np.vstack([placed_boxes, cands[k]])
    if skipped:
        warnings.warn(
            f"{skipped} of {len(texts)} star labels could not be placed without overlap "
            "(or their star lies outside the axes) and were left out",
            HrstageWarning,
            stacklevel=3,
        )
    return out
