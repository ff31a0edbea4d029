"""HR, Kiel and colour-magnitude diagrams of tagged catalogues.

Every function draws on the Axes it is given (or on a new :class:`matplotlib.figure.Figure` it
creates without pyplot) and returns the Axes. Nothing here calls ``show`` or changes matplotlib's
global settings: every property is set on the artist it concerns.

The stage regions and boundary curves come from :func:`hrstage.stagemap.stage_map`, the same
object the classifier uses, so what is drawn is what the labels were decided against.

Artists carry a ``gid`` so they can be found and restyled afterwards:
``region:<stage>`` (filled polygons), ``region_label:<stage>``, ``curve:<name>`` (Line2D),
``curve_label:<name>``, ``radius:<R>`` and ``radius_label:<R>``, ``stars:<stage>`` or
``stars:teff`` (PathCollections), ``flagged:<group>``, ``error_bars``, ``error_ellipses``,
``star_label``, ``caption``, ``hrstage:sptype_axis``, ``hrstage:mbol_axis``/``hrstage:mv_axis``.
"""

from __future__ import annotations

import numpy as np
from matplotlib.patches import Polygon

from .. import flags as F
from ..errors import HrstageInputError, HrstageWarning
from ..stages import LABELS, STAGES
from ._data import column, gather
from .axes import LOGG_SUN, add_magnitude_axis, add_sptype_axis
from .colour import blackbody_colour
from .labels import place_labels
from .palette import FLAG_MARKS, get_palette

__all__ = ["hr_diagram", "kiel_diagram", "colour_magnitude_diagram", "DEFAULT_RADII", "DEFAULT_CURVES", "CURVE_SHORT",
           "CBM_MARKED_STAGES"]

LOGT_SUN = np.log10(5772.0)  # IAU 2015 B3 nominal solar Teff
#: Radii (R_sun) of the default constant-radius lines.
DEFAULT_RADII = (0.01, 0.1, 1.0, 10.0, 100.0, 1000.0)
_DEFAULT_XLIM = (4.75, 3.40)
_DEFAULT_YLIM = (-4.6, 6.6)
_MAX_LABELS = 60

# Line styles of the named boundary curves (others: thin solid).
_CURVE_STYLE = {
    "zams": dict(lw=1.6, ls="-"),
    "tams": dict(lw=1.2, ls="-"),
    "ms_upper": dict(lw=1.0, ls=(0, (6, 2))),
    "bgb": dict(lw=1.1, ls=(0, (5, 2, 1, 2))),
    "hei": dict(lw=1.1, ls=(0, (1, 1.5))),
    "agb": dict(lw=1.0, ls=(0, (3, 1.5))),
    "wd_min": dict(lw=0.9, ls="-"),
    "wd_max": dict(lw=0.9, ls="-"),
}

#: Curves drawn by default (``show_curves=True``): the named stellar loci. ``"all"`` draws every
#: curve of the stage map, a sequence of names draws those.
DEFAULT_CURVES = ("zams", "tams", "bgb", "hei")

#: Short on-figure names of the stage-map curves (the Line2D label keeps the full, cited name).
CURVE_SHORT = {
    "zams": "ZAMS",
    "tams": "TAMS",
    "ms_upper": "MS edge (13.8 Gyr)",
    "ms_lower": "MS lower edge",
    "binary_upper": "binary band",
    "bgb": "BGB",
    "ehg": "end of HG",
    "hei": "He ignition",
    "giant_tip": "RGB tip",
    "agb": "AGB",
    "sg_lower": "supergiant edge",
    "bg_lower": "bright-giant edge",
    "wd_min": "WD edge (1.35 M$_\\odot$)",
    "wd_max": "WD edge (0.2 M$_\\odot$)",
}

#: Stages on which the "cool but massive" flag is marked on the figures and listed in the report:
#: there it contradicts the label; on a giant or brighter label it adds nothing.
CBM_MARKED_STAGES = tuple(s for s in ("main_sequence", "subgiant") if s in STAGES)

FLAG_GROUPS = {
    "cool_but_massive": F.COOL_BUT_MASSIVE,
    "sptype_conflict": F.SPTYPE_CONFLICT,
    "poor_distance": F.LOW_PARALLAX_SNR | F.NONPOSITIVE_PARALLAX,
}


# ----------------------------------------------------------------------------------------------
# helpers
# ----------------------------------------------------------------------------------------------
def _new_axes(figsize):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=figsize, layout="constrained")
    FigureCanvasAgg(fig)
    return fig.add_subplot()


def _get_stage_map(stage_map, feh, data):
    if stage_map is not None:
        return stage_map
    if isinstance(feh, str):
        if feh != "median":
            raise HrstageInputError(f"feh must be a number or 'median', not {feh!r}")
        values = column(data, ("feh_used", "feh")) if data is not None else None
        feh = float(np.nanmedian(values)) if values is not None and np.isfinite(values).any() else 0.0
    from ..stagemap import stage_map as build

    return build(feh=float(feh))


def _feh_of(sm, default):
    for attr in ("feh", "feh_used"):
        v = getattr(sm, attr, None)
        if isinstance(v, (int, float, np.floating)):
            return float(v)
    return default if isinstance(default, (int, float)) else None


def _limits(values, default, margin, hard):
    """Axis limits (in the order of ``default``, which may be reversed) widened to the data."""
    lo, hi = sorted(default)
    v = values[np.isfinite(values)] if values is not None else np.empty(0)
    if v.size:
        lo = max(min(lo, v.min() - margin), hard[0])
        hi = min(max(hi, v.max() + margin), hard[1])
    return (hi, lo) if default[0] > default[1] else (lo, hi)


def _darker(colour, factor=0.55):
    from matplotlib.colors import to_rgb

    r, g, b = to_rgb(colour)
    return (r * factor, g * factor, b * factor)


def _marker_size(n):
    return float(np.clip(36.0 * np.sqrt(150.0 / max(n, 1)), 3.0, 36.0))


def _resolve_labels(data, n, label_column, label_rows, labels):
    if labels is None and label_column is None:
        return None, None
    if labels is not None:
        texts = np.asarray([str(v) for v in np.asarray(labels, dtype=object).ravel()], dtype=object)
        if texts.size != n:
            raise HrstageInputError(f"labels has {texts.size} entries but there are {n} stars")
    else:
        texts = column(data, (label_column,), kind="text") if data is not None else None
        if texts is None:
            raise HrstageInputError(f"label_column {label_column!r} is not a column of the table")
    if label_rows is None:
        rows = np.flatnonzero(texts != "")
    else:
        rows = np.asarray(label_rows)
        if rows.dtype == bool:
            if rows.size != n:
                raise HrstageInputError(f"label_rows mask has {rows.size} entries but there are {n} stars")
            rows = np.flatnonzero(rows)
        rows = rows.astype(int)
        if rows.size and (rows.min() < -n or rows.max() >= n):
            raise HrstageInputError(f"label_rows must be row numbers between 0 and {n - 1}")
        rows = rows % n
    if rows.size > _MAX_LABELS:
        import warnings

        warnings.warn(f"{rows.size} labels requested; only the first {_MAX_LABELS} are drawn",
                      HrstageWarning, stacklevel=3)
        rows = rows[:_MAX_LABELS]
    return rows, texts


def _stage_or_locate(stars, sm, x, y):
    if stars.stage is not None:
        return stars.stage
    if sm is None:
        return None
    codes = np.asarray(sm.locate(x, y)).astype(int)
    names = np.array(STAGES, dtype=object)[np.clip(codes, 0, len(STAGES) - 1)]
    names[~(np.isfinite(x) & np.isfinite(y))] = ""
    return names


def _draw_points(ax, x, y, stage, teff_colours, pal, color_by, size, rasterize, values=None, norm=None,
                 cmap=None):
    """Scatter the stars by stage (one collection per stage present); returns legend handles.

    The legend counts every row of a stage, with or without a position, so it agrees with the
    catalogue's summary; rows that cannot be drawn are counted in the entry ("n without a
    position, not drawn"). With ``values`` (colour by a numeric column) the points are filled
    from ``cmap``/``norm`` and the legend swatches are neutral: the marker tells the stage.
    """
    from matplotlib.lines import Line2D

    handles = []
    ok = np.isfinite(x) & np.isfinite(y)
    if stage is None:
        stage = np.full(x.size, "unclassified", dtype=object)
    stage = np.where(stage == "", "unclassified", stage)
    neutral = color_by != "stage"
    for name in STAGES:
        rows = stage == name
        total = int(rows.sum())
        if total == 0:
            continue
        m = ok & rows
        count = int(m.sum())
        style = pal[name]
        label = f"{style.label} ({total})" if count == total else f"{style.label} ({total}; {total - count} not drawn)"
        if count:
            if values is not None:
                colour_kw = {"c": values[m], "cmap": cmap, "norm": norm, "plotnonfinite": True}
            elif color_by == "teff":
                colour_kw = {"c": teff_colours[m]}
            else:
                colour_kw = {"color": style.colour}
            coll = ax.scatter(
                x[m], y[m], s=size * (1.6 if style.marker == "*" else 1.0), marker=style.marker,
                edgecolors=pal.edge, linewidths=0.4, zorder=3, label=label,
                rasterized=rasterize, **colour_kw,
            )
            coll.set_gid(f"stars:{name}" if color_by == "stage" else f"stars:{color_by}:{name}")
        if neutral or not count:
            # a neutral swatch (the marker is what it explains), or a stage with no drawable row
            face = "#d9d9d9" if neutral else style.colour
            h = Line2D([], [], ls="", marker=style.marker, markerfacecolor=face, markeredgecolor=pal.edge,
                       markersize=6, label=label)
            handles.append(h)
        else:
            handles.append(coll)
    return handles


def _colour_values(data, color_by, n):
    """Numbers of the column ``color_by`` for colouring the points, with a one-line error."""
    from ._data import _colnames, _find

    name = _find(data, (color_by,)) if data is not None else None
    if name is None:
        numeric = []
        for c in _colnames(data):
            try:
                if np.issubdtype(np.asarray(np.ma.getdata(data[c])).dtype, np.number):
                    numeric.append(c)
            except Exception:  # a column we cannot read as an array is simply not offered
                pass
        hint = f"; numeric columns: {', '.join(numeric[:12])}{' ...' if len(numeric) > 12 else ''}" if numeric else ""
        raise HrstageInputError(
            f"colour by {color_by!r}: no such column (use 'stage', 'teff' or the name of a numeric column{hint})")
    raw = np.asarray(np.ma.getdata(data[name]))
    if raw.dtype.kind not in "biuf":
        raise HrstageInputError(f"colour by {color_by!r}: column {name!r} holds {'text' if raw.dtype.kind in 'USO' else raw.dtype}, not numbers; "
                                "colour by a column of numbers")
    values = np.atleast_1d(column(data, (name,)))
    if values.size != n:
        raise HrstageInputError(f"colour by {color_by!r}: column has {values.size} values for {n} stars")
    unit = getattr(data[name], "unit", None)
    return name, values, (f"{name} ({unit})" if unit not in (None, "") else name)


def _colour_scale(ax, values, label, own):
    """Norm, colour map (NaN in grey) and colour bar for a numeric colour column."""
    from matplotlib import colormaps
    from matplotlib.cm import ScalarMappable
    from matplotlib.colors import Normalize

    finite = values[np.isfinite(values)]
    lo, hi = (float(finite.min()), float(finite.max())) if finite.size else (0.0, 1.0)
    if hi <= lo:
        lo, hi = lo - 0.5, hi + 0.5
    norm = Normalize(lo, hi)
    cmap = colormaps["viridis"].with_extremes(bad="#bdbdbd")
    mappable = ScalarMappable(norm=norm, cmap=cmap)
    cb = ax.figure.colorbar(mappable, ax=ax, location="right", pad=0.02, fraction=0.04, aspect=35, shrink=0.85)
    n_bad = int((~np.isfinite(values)).sum())
    cb.set_label(label + (f"; grey: no value ({n_bad})" if n_bad else ""))
    cb.ax.set_gid("hrstage:colour_bar")
    return norm, cmap


def _draw_flags(ax, x, y, stars, mark_flagged, size, stage=None):
    if mark_flagged is False or mark_flagged is None:
        return []
    groups = list(FLAG_GROUPS) if mark_flagged is True else list(mark_flagged)
    unknown = [g for g in groups if g not in FLAG_GROUPS]
    if unknown:
        raise HrstageInputError(f"mark_flagged: unknown group(s) {', '.join(unknown)}; expected {', '.join(FLAG_GROUPS)}")
    ok = np.isfinite(x) & np.isfinite(y)
    handles = []
    for g in groups:
        m = ok & ((stars.flags & FLAG_GROUPS[g]) != 0)
        if g == "sptype_conflict" and stars.verdict is not None:
            m |= ok & np.isin(stars.verdict, ("lumclass_conflict", "tclass_conflict"))
        marker, edge, lw, text = FLAG_MARKS[g]
        if g == "cool_but_massive":
            # on a star labelled giant or brighter the flag only repeats the label: mark it
            # where the label says main sequence or subgiant (and when no label is known)
            if stage is not None:
                m &= np.isin(stage, CBM_MARKED_STAGES) | (stage == "")
            text = f"{text}, labelled {' or '.join(LABELS[s].lower() for s in CBM_MARKED_STAGES)}"
        if not m.any():
            continue
        coll = ax.scatter(x[m], y[m], s=size * 3.2, marker=marker, facecolors="none", edgecolors=edge,
                          linewidths=lw, zorder=3.5, label=f"{text} ({int(m.sum())})")
        coll.set_gid(f"flagged:{g}")
        handles.append(coll)
    return handles


def _draw_errors(ax, x, y, ex, ey, corr, mode):
    if not mode:
        return None
    if ex is None and ey is None:
        import warnings

        warnings.warn("error_bars requested but the data have no logt_err / logl_err", HrstageWarning, stacklevel=3)
        return None
    ex = np.zeros_like(x) if ex is None else np.where(np.isfinite(ex), ex, 0.0)
    ey = np.zeros_like(y) if ey is None else np.where(np.isfinite(ey), ey, 0.0)
    ok = np.isfinite(x) & np.isfinite(y) & ((ex > 0) | (ey > 0))
    if mode == "ellipse":
        from matplotlib.collections import PolyCollection

        r = np.zeros_like(x) if corr is None else np.clip(np.nan_to_num(corr), -0.999, 0.999)
        phi = np.linspace(0, 2 * np.pi, 49)
        c, s = np.cos(phi), np.sin(phi)
        # Cholesky factor of [[ex^2, r ex ey], [r ex ey, ey^2]] applied to the unit circle (1 sigma)
        px = x[ok, None] + ex[ok, None] * c[None, :]
        py = y[ok, None] + ey[ok, None] * (r[ok, None] * c[None, :] + np.sqrt(1 - r[ok, None] ** 2) * s[None, :])
        verts = np.stack([px, py], axis=2)
        coll = PolyCollection(verts, facecolors="none", edgecolors="0.45", linewidths=0.5, zorder=2)
        coll.set_gid("error_ellipses")
        ax.add_collection(coll, autolim=False)
        return coll
    if mode is not True:
        raise HrstageInputError(f"error_bars must be True, False or 'ellipse', not {mode!r}")
    eb = ax.errorbar(x[ok], y[ok], xerr=ex[ok], yerr=ey[ok], fmt="none", ecolor="0.55", elinewidth=0.6,
                     capsize=0, zorder=2)
    for part in eb.lines[2]:
        part.set_gid("error_bars")
    return eb


def _legend(ax, handles, own_figure):
    for old in list(ax.figure.legends) + ([ax.get_legend()] if ax.get_legend() is not None else []):
        if old.get_gid() == "hrstage:legend":
            old.remove()
    if not handles:
        return None
    if own_figure:
        longest = max(len(h.get_label()) for h in handles)
        leg = ax.figure.legend(handles=handles, loc="outside lower center",
                               ncols=min(3 if longest < 34 else 2, len(handles)),
                               fontsize="small", frameon=False)
    else:
        leg = ax.legend(handles=handles, loc="best", fontsize="small", framealpha=0.85)
    leg.set_gid("hrstage:legend")
    return leg


def _caption(ax, text):
    t = ax.text(0.99, 0.012, text, transform=ax.transAxes, ha="right", va="bottom", fontsize="x-small",
                color="0.35", zorder=5)
    t.set_gid("caption")
    return t


def _caption_text(feh, n_missing, extra=""):
    parts = ["Stages are indicative, not a spectroscopic analysis"]
    if feh is not None:
        parts.append(f"boundaries: Tout+1996, Hurley+2000 at [Fe/H] = {feh:+.2f}")
    if extra:
        parts.append(extra)
    if n_missing:
        parts.append(f"{n_missing} star{'s' if n_missing != 1 else ''} without a position not shown")
    return "\n".join(parts)


def _label_targets(ax, data, n, x, y, label_column, label_rows, labels):
    rows, texts = _resolve_labels(data, n, label_column, label_rows, labels)
    if rows is None or rows.size == 0:
        return []
    ok = np.isfinite(x) & np.isfinite(y)
    ax.figure.draw_without_rendering()  # settle the layout before measuring in display space
    pts = np.column_stack([x[ok], y[ok]])
    return place_labels(ax, x[rows], y[rows], list(texts[rows]), points_xy=pts)


def _setup_axes(ax, figsize):
    own = ax is None
    if own:
        ax = _new_axes(figsize)
    return ax, own


# ----------------------------------------------------------------------------------------------
# HR diagram
# ----------------------------------------------------------------------------------------------
def hr_diagram(data=None, *, teff=None, logt=None, lum=None, logl=None, stage=None, flags=None,
               logt_err=None, logl_err=None, corr=None, ax=None, feh=0.0, stage_map=None,
               color_by="stage", palette="default", show_regions=True, show_curves=True,
               radius_lines=DEFAULT_RADII, error_bars=False, mark_flagged=True, label_column=None,
               label_rows=None, labels=None, top_axis="sptype", right_axis="mbol", mv_teff=5772.0,
               xlim=None, ylim=None, title=None, legend=True, caption=True, marker_size=None,
               figsize=(7.5, 7.0)):
    """Draw an annotated Hertzsprung-Russell diagram (log Teff reversed on x, log L on y).

    Parameters
    ----------
    data : astropy.table.Table or mapping of arrays, optional
        A tagged table (output of :func:`hrstage.classify`) or any table with Teff and L columns:
        ``teff_used``/``teff`` (K) or ``logt``; ``logl_used``/``logl`` or ``lum`` (L_sun); optional
        ``stage``, ``flags``, ``logt_err``, ``logl_err``, ``logt_logl_corr``, ``sptype_verdict``.
    teff, logt, lum, logl, stage, flags, logt_err, logl_err, corr : array_like, optional
        Plain arrays instead of (or overriding) table columns.
    ax : matplotlib.axes.Axes, optional
        Axes to draw on. Without one, a new Figure (``figsize``, constrained layout, no pyplot) is
        made and the legend goes below the diagram.
    feh : float or "median"
        Metallicity of the stage map drawn; ``"median"`` takes the median ``feh_used`` of the table.
    stage_map : hrstage.stagemap.StageMap, optional
        Use this stage map instead of building one for ``feh``.
    color_by : str
        Face colour of the points: ``"stage"`` (the stage colour of ``palette``), ``"teff"`` (the
        blackbody display colour of the star's Teff, :func:`hrstage.plot.blackbody_colour`) or the
        name of any numeric column of ``data`` (a colour scale with a colour bar; stars without a
        value in grey). The marker always shows the stage.
    palette : {"default", "colourblind"} or Palette
    show_regions : bool
        Draw the filled stage regions of the stage map, each with its name.
    show_curves : bool, "all" or sequence of str
        Draw labelled boundary curves: ``True`` the loci of :data:`DEFAULT_CURVES` (ZAMS, TAMS,
        base of the giant branch, He ignition), ``"all"`` every curve of the stage map, or the
        curves named (keys of ``StageMap.curves``). On the figure each curve carries a short name
        (:data:`CURVE_SHORT`); its Line2D label is the stage map's full, cited name.
    radius_lines : sequence of float or None
        Radii in R_sun of the dashed constant-radius lines (L = R^2 (Teff / 5772 K)^4).
    error_bars : bool or "ellipse"
        ``True``: 1-sigma error bars in log Teff and log L; ``"ellipse"``: 1-sigma error ellipses
        using ``logt_logl_corr``.
    mark_flagged : bool or sequence of str
        Ring the flagged stars: groups ``"cool_but_massive"`` (only on stars labelled
        main sequence or subgiant, where the flag contradicts the label), ``"sptype_conflict"``,
        ``"poor_distance"`` (``True`` = all three).
    label_column : str, optional
        Column with the text of star labels (e.g. an identifier).
    label_rows : sequence of int or bool mask, optional
        Which rows to label (default: all rows with a non-empty label, at most 60).
    labels : sequence of str, optional
        Label texts given directly (one per star) instead of ``label_column``.
    top_axis : {"sptype", None}
        Dwarf spectral-type scale on top (Pecaut & Mamajek 2013 anchors).
    right_axis : {"mbol", "mv", None}
        Absolute-magnitude scale on the right: M_bol (IAU 2015) or M_V with BC_V at ``mv_teff``.
    xlim, ylim : (float, float), optional
        Limits in log Teff (give them high-to-low to keep hot on the left) and log L.
    title : str, optional
    legend, caption : bool
        Legend of stages and flags; the small caption naming the relations, metallicity and the
        caution that labels are indicative.
    marker_size : float, optional
        Marker area in points^2 (default shrinks with the number of stars).
    figsize : (float, float)
        Size of the new figure when ``ax`` is not given.

    Returns
    -------
    matplotlib.axes.Axes
    """
    if not isinstance(color_by, str) or not color_by:
        raise HrstageInputError(f"color_by must be 'stage', 'teff' or a column name, not {color_by!r}")
    pal = get_palette(palette)
    stars = gather(data, teff=teff, logt=logt, lum=lum, logl=logl, stage=stage, flags=flags,
                   logt_err=logt_err, logl_err=logl_err, corr=corr, need="logl")
    x, y = stars.logt, stars.logl
    colour_values = None
    if color_by not in ("stage", "teff"):
        cname, colour_values, clabel = _colour_values(data, color_by, stars.n)
    ax, own = _setup_axes(ax, figsize)
    need_map = show_regions or show_curves or stars.stage is None
    sm = _get_stage_map(stage_map, feh, data) if need_map else None

    ax.set_xlim(xlim if xlim is not None else _limits(x, _DEFAULT_XLIM, 0.04, (3.2, 5.4)))
    ax.set_ylim(ylim if ylim is not None else _limits(y, _DEFAULT_YLIM, 0.3, (-6.0, 7.5)))
    ax.set_xlabel(r"$\log_{10}\,(T_\mathrm{eff}\,/\,\mathrm{K})$")
    ax.set_ylabel(r"$\log_{10}\,(L\,/\,L_\odot)$")
    ax.minorticks_on()
    ax.tick_params(which="both", direction="in")
    ax.tick_params(which="both", right=right_axis is None, top=top_axis is None)

    named = []
    if sm is not None and show_curves:
        named += _draw_curves(ax, sm, pal, show_curves)
    if radius_lines:
        named += _draw_radius_lines(ax, radius_lines)
    regions = _draw_regions(ax, sm, pal) if sm is not None and show_regions else []

    size = marker_size if marker_size is not None else _marker_size(int(np.isfinite(x).sum()))
    _draw_errors(ax, x, y, stars.logt_err, stars.logl_err, stars.corr, error_bars)
    st = _stage_or_locate(stars, sm, x, y)
    teff_colours = blackbody_colour(np.where(np.isfinite(x), 10.0**np.nan_to_num(x, nan=3.76), np.nan)) if color_by == "teff" else None
    norm = cmap = None
    if colour_values is not None:
        norm, cmap = _colour_scale(ax, colour_values, clabel, own)
    handles = _draw_points(ax, x, y, st, teff_colours, pal, color_by, size, rasterize=stars.n > 5000,
                           values=colour_values, norm=norm, cmap=cmap)
    handles += _draw_flags(ax, x, y, stars, mark_flagged, size, stage=st)

    if top_axis == "sptype":
        add_sptype_axis(ax)
    elif top_axis is not None:
        raise HrstageInputError(f"top_axis must be 'sptype' or None, not {top_axis!r}")
    if right_axis is not None:
        add_magnitude_axis(ax, right_axis, mv_teff=mv_teff)
    if title:
        ax.set_title(title)
    _finish(ax, own, handles, named, regions, x, y, size, pal, legend,
            _caption_text(_feh_of(sm, feh) if sm is not None else None, int((~stars.has_position).sum()))
            if caption else None)
    _label_targets(ax, data, stars.n, x, y, label_column, label_rows, labels)
    return ax


def _finish(ax, own, handles, named, regions, x, y, size, pal, legend, caption_text):
    """Legend, caption, then the names of curves and regions on the settled layout.

    A curve whose name finds no free place is put in the legend instead, and the names are
    placed once more on the layout with that legend (which may have grown).
    """
    ok = np.isfinite(x) & np.isfinite(y)
    pts = np.column_stack([x[ok], y[ok]])
    if legend:
        _legend(ax, handles, own)
    if caption_text is not None:
        _caption(ax, caption_text)
    unnamed, placed = _place_names(ax, named, regions, pts, size, pal)
    if unnamed and legend:
        for t in placed:
            t.remove()
        _legend(ax, handles + [_line_handle(line) for line in unnamed], own)
        still, _ = _place_names(ax, named, regions, pts, size, pal)
        extra = [line for line in still if line not in unnamed]
        if extra:  # rare: the grown legend took a name's place; name those in the legend too
            _legend(ax, handles + [_line_handle(line) for line in unnamed + extra], own)


def _draw_regions(ax, sm, pal):
    """Fill the stage regions; returns [(stage, polygons, style)] for naming them later."""
    regions = getattr(sm, "regions", {}) or {}
    out = []
    for name, polys in regions.items():
        if name not in pal.styles:
            continue
        style = pal[name]
        if isinstance(polys, np.ndarray) and polys.ndim == 2:
            polys = [polys]
        kept = []
        for k, poly in enumerate(polys):
            poly = np.asarray(poly, dtype=float)
            poly = poly[np.all(np.isfinite(poly), axis=1)]
            if len(poly) < 3:
                continue
            patch = Polygon(poly, closed=True, facecolor=style.colour, edgecolor="none",
                            alpha=pal.region_alpha, zorder=0.5, label=style.label if k == 0 else None)
            patch.set_gid(f"region:{name}")
            ax.add_artist(patch)  # as add_patch, without the (slow, unneeded) data-limit update
            kept.append(poly)
        if kept:
            out.append((name, kept, style, None))
    return out


def _select_curves(sm, show_curves):
    curves = getattr(sm, "curves", {}) or {}
    if show_curves is True:
        names = [n for n in DEFAULT_CURVES if n in curves]
    elif show_curves == "all":
        names = list(curves)
    else:
        names = list(show_curves)
        unknown = [n for n in names if n not in curves]
        if unknown:
            raise HrstageInputError(
                f"show_curves: unknown curve(s) {', '.join(unknown)}; the stage map has {', '.join(curves)}"
            )
    return [(n, curves[n]) for n in names]


def _curve_text_kw(pal):
    return dict(fontsize="x-small", color=pal.curve,
                bbox=dict(boxstyle="round,pad=0.15", facecolor="white", edgecolor="none", alpha=0.75))


def _draw_curves(ax, sm, pal, show_curves=True, logg=False):
    """Draw the stage-map curves; returns the lines to be named: [(line, text, gid, kw, prefer)]."""
    out = []
    for name, curve in _select_curves(sm, show_curves):
        yv = _curve_logg(curve) if logg else curve.logl
        if yv is None:
            continue
        style = _CURVE_STYLE.get(name, dict(lw=0.8, ls="-"))
        label = getattr(curve, "label", None) or name
        (line,) = ax.plot(curve.logt, yv, color=pal.curve, zorder=2.5, label=label, **style)
        line.set_gid(f"curve:{name}")
        out.append((line, CURVE_SHORT.get(name, label), f"curve_label:{name}", _curve_text_kw(pal), 0.5))
    return out


def _radius_text(r):
    return rf"{r:g} $R_\odot$"


def _draw_radius_lines(ax, radii):
    """Dashed constant-radius lines; returns the lines to be named (as :func:`_draw_curves`)."""
    lo, hi = sorted(ax.get_xlim())
    lt = np.linspace(lo - 0.1, hi + 0.1, 200)
    out = []
    for r in radii:
        r = float(r)
        if not r > 0:
            raise HrstageInputError(f"radius_lines must be positive radii in R_sun, got {r}")
        ll = 2 * np.log10(r) + 4 * (lt - LOGT_SUN)
        (line,) = ax.plot(lt, ll, color="0.62", lw=0.7, ls=(0, (4, 3)), zorder=0.8, label=_radius_text(r))
        line.set_gid(f"radius:{r:g}")
        out.append((line, _radius_text(r), f"radius_label:{r:g}", dict(fontsize="x-small", color="0.45"), 0.9))
    return out


def _place_names(ax, lines, regions, point_xy, size, pal):
    """Name curves and regions where the names cover no data, no other line and no other text.

    Runs on the settled layout. ``lines`` as returned by :func:`_draw_curves` /
    :func:`_draw_radius_lines`, ``regions`` as by :func:`_draw_regions`; ``point_xy`` the drawn
    positions. Returns the lines that could not be named (the caller puts them in the legend)
    and the texts placed.
    """
    from ._placement import Clutter, text_size_px

    ax.figure.draw_without_rendering()
    cl = Clutter(ax)
    radius_px = 0.5 * np.sqrt(size) * ax.figure.dpi / 72.0 + 1.0
    if point_xy is not None and len(point_xy):
        cl.add_points(point_xy[:, 0], point_xy[:, 1], radius_px)
    for line, *_ in lines:
        cl.add_line(line.get_gid(), line.get_xdata(), line.get_ydata(), width_px=line.get_linewidth() + 2.0)
    for t in ax.texts:  # caption and anything the caller drew before
        if t.get_visible() and t.get_text():
            cl.add_artist_extent(t)
    leg = ax.get_legend()
    if leg is not None:
        cl.add_artist_extent(leg)
    unnamed, placed = [], []
    for line, text, gid, kw, prefer in lines:  # stage-map curves first, then radius lines
        w, h = text_size_px(ax, text, **{k: v for k, v in kw.items() if k != "bbox"})
        pad = 3.0 if "bbox" in kw else 1.0
        spot = cl.along_line(line.get_gid(), line.get_xdata(), line.get_ydata(), w + 2 * pad, h + 2 * pad,
                             prefer=prefer)
        if spot is None:
            unnamed.append(line)
            continue
        t = ax.text(spot[0], spot[1], text, rotation=spot[2], rotation_mode="anchor", ha="center", va="center",
                    zorder=4, **kw)
        t.set_gid(gid)
        placed.append(t)
        from ._placement import rotated_corners

        cx, cy = ax.transData.transform((spot[0], spot[1]))
        cl.add_text_box(rotated_corners(cx, cy, w + 2 * pad, h + 2 * pad, spot[2]))
    for name, polys, style, accept in regions:
        for fontsize in ("small", "x-small"):  # a smaller name where the full size finds no room
            kw = dict(fontsize=fontsize, fontstyle="italic", color=_darker(style.colour), alpha=0.9)
            w, h = text_size_px(ax, style.label, **kw)
            spot = cl.inside_polygons(polys, w + 2, h + 2, accept=accept)
            if spot is not None:
                break
        if spot is None:
            continue
        t = ax.text(spot[0], spot[1], style.label, ha="center", va="center", zorder=1, **kw)
        t.set_gid(f"region_label:{name}")
        placed.append(t)
        cx, cy = ax.transData.transform(spot)
        cl.add_text_box(rotated_corners(cx, cy, w + 2, h + 2, 0.0))
    return unnamed, placed


def _line_handle(line):
    from matplotlib.lines import Line2D

    gid = line.get_gid() or ""
    name = gid.split(":", 1)[1] if ":" in gid else gid
    text = CURVE_SHORT.get(name, line.get_label()) if gid.startswith("curve:") else line.get_label()
    handle = Line2D([], [])
    handle.update_from(line)  # colour, width and dash pattern
    handle.set_label(text)
    handle.set_gid(f"legend_line:{name}")
    return handle


# ----------------------------------------------------------------------------------------------
# Kiel diagram
# ----------------------------------------------------------------------------------------------
def _curve_logg(curve):
    mass = getattr(curve, "mass", None)
    if mass is None:
        return None
    mass = np.broadcast_to(np.asarray(mass, dtype=float), np.shape(curve.logt))
    with np.errstate(divide="ignore", invalid="ignore"):
        return LOGG_SUN + np.log10(mass) + 4.0 * (np.asarray(curve.logt, float) - LOGT_SUN) - np.asarray(curve.logl, float)


def _kiel_regions(ax, sm, pal, feh, n=170):
    try:
        from ..classifier import logl_from_logg
    except ImportError:
        return None
    from scipy import ndimage

    (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
    gx = np.linspace(x0, x1, n)
    gy = np.linspace(y0, y1, n)
    lt, lg = np.meshgrid(gx, gy)
    res = logl_from_logg(lt.ravel(), lg.ravel(), feh)
    ll = np.asarray(res[0] if isinstance(res, tuple) else res, dtype=float)
    codes = np.asarray(sm.locate(lt.ravel(), ll), dtype=int).reshape(lt.shape)
    codes[~np.isfinite(ll.reshape(lt.shape))] = STAGES.index("unclassified")
    from matplotlib.colors import to_rgba

    import contourpy

    rgba = np.zeros(lt.shape + (4,))
    regions = []
    for i, name in enumerate(STAGES):
        if name == "unclassified":
            continue
        m = codes == i
        if not m.any():
            continue
        rgba[m] = to_rgba(pal[name].colour, pal.region_alpha)
        # outlines of the region's pixels, named like the HR regions (on the settled layout)
        outlines = contourpy.contour_generator(gx, gy, np.pad(m, 0).astype(float)).lines(0.5)
        outlines = [np.asarray(o) for o in outlines if len(o) >= 4]

        def accept(xy, m=m):
            ix = np.clip(np.rint((xy[:, 0] - x0) / (x1 - x0) * (n - 1)).astype(int), 0, n - 1)
            iy = np.clip(np.rint((xy[:, 1] - y0) / (y1 - y0) * (n - 1)).astype(int), 0, n - 1)
            return m[iy, ix]

        if outlines:
            regions.append((name, outlines, pal[name], accept))
    im = ax.imshow(rgba, extent=(x0, x1, y0, y1), origin="lower", aspect="auto", interpolation="nearest",
                   zorder=0.4)
    im.set_gid("regions:raster")
    ax.set_xlim(x0, x1)
    ax.set_ylim(y0, y1)
    return regions


def kiel_diagram(data=None, *, teff=None, logt=None, logg=None, stage=None, flags=None, ax=None, feh=0.0,
                 stage_map=None, color_by="stage", palette="default", show_regions=True, show_curves=True,
                 mark_flagged=True, label_column=None, label_rows=None, labels=None, top_axis="sptype",
                 xlim=None, ylim=None, title=None, legend=True, caption=True, marker_size=None,
                 figsize=(7.5, 7.0)):
    """Draw a Kiel diagram: log Teff (reversed) against log g (increasing downwards).

    The stage map's curves are carried over from (log Teff, log L) with their masses,
    ``log g = log g_sun + log M + 4 (log Teff - log 5772 K) - log L`` (log g_sun = 4.438 from the
    IAU 2015 nominal GM_sun and R_sun). The regions are shown as a shaded raster: each pixel's
    (Teff, log g) is turned into a luminosity with the classifier's own
    ``hrstage.classifier.logl_from_logg`` (model mass at that position) and located in the stage
    map, so the shading is exactly what the classifier would decide for a star there.

    Parameters are those of :func:`hr_diagram`; ``logg`` replaces the luminosity (column
    ``logg``). Without a ``logg`` column but with ``mass_est``, ``teff_used`` and ``logl_used``,
    log g is computed from them.

    Returns
    -------
    matplotlib.axes.Axes
    """
    if color_by not in ("stage", "teff"):
        raise HrstageInputError(f"color_by must be 'stage' or 'teff', not {color_by!r}")
    pal = get_palette(palette)
    stars = gather(data, teff=teff, logt=logt, logg=logg, stage=stage, flags=flags, need=None)
    g = stars.logg
    if g is None:
        mass = column(data, ("mass_est",)) if data is not None else None
        if mass is None or stars.logl is None:
            raise HrstageInputError("no surface gravity: give a 'logg' column (or logg=), or mass_est with logl_used")
        with np.errstate(divide="ignore", invalid="ignore"):
            g = LOGG_SUN + np.log10(mass) + 4.0 * (stars.logt - LOGT_SUN) - stars.logl
    x = stars.logt
    ax, own = _setup_axes(ax, figsize)
    need_map = show_regions or show_curves or (stars.stage is None and stars.logl is not None)
    sm = _get_stage_map(stage_map, feh, data) if need_map else None
    ax.set_xlim(xlim if xlim is not None else _limits(x, _DEFAULT_XLIM, 0.04, (3.2, 5.4)))
    ax.set_ylim(ylim if ylim is not None else _limits(g, (9.2, -0.8), 0.2, (-1.5, 9.8)))
    ax.set_xlabel(r"$\log_{10}\,(T_\mathrm{eff}\,/\,\mathrm{K})$")
    ax.set_ylabel(r"$\log_{10}\,(g\,/\,\mathrm{cm\,s^{-2}})$")
    ax.minorticks_on()
    ax.tick_params(which="both", direction="in", right=True, top=top_axis is None)
    feh_value = _feh_of(sm, feh) if sm is not None else None
    note = ""
    regions = []
    if sm is not None and show_regions:
        regions = _kiel_regions(ax, sm, pal, feh_value if feh_value is not None else 0.0)
        if regions is None:
            regions = []
            note = "regions not shaded: hrstage.classifier.logl_from_logg unavailable"
    named = _draw_curves(ax, sm, pal, show_curves, logg=True) if sm is not None and show_curves else []
    st = stars.stage
    if st is None and sm is not None and stars.logl is not None:
        st = _stage_or_locate(stars, sm, x, stars.logl)
    size = marker_size if marker_size is not None else _marker_size(int(np.isfinite(x).sum()))
    teff_colours = blackbody_colour(np.where(np.isfinite(x), 10.0**np.nan_to_num(x, nan=3.76), np.nan)) if color_by == "teff" else None
    handles = _draw_points(ax, x, g, st, teff_colours, pal, color_by, size, rasterize=stars.n > 5000)
    handles += _draw_flags(ax, x, g, stars, mark_flagged, size, stage=st)
    if top_axis == "sptype":
        add_sptype_axis(ax)
    if title:
        ax.set_title(title)
    n_missing = int((~(np.isfinite(x) & np.isfinite(g))).sum())
    _finish(ax, own, handles, named, regions, x, g, size, pal, legend,
            _caption_text(feh_value, n_missing, note) if caption else None)
    _label_targets(ax, data, stars.n, x, g, label_column, label_rows, labels)
    return ax


# ----------------------------------------------------------------------------------------------
# colour-magnitude diagram
# ----------------------------------------------------------------------------------------------
_CMD_SYSTEMS = {
    "gaia": dict(
        colour=("bp_rp", "bp-rp", "bprp"),
        blue=("phot_bp_mean_mag", "bpmag", "bp"),
        red=("phot_rp_mean_mag", "rpmag", "rp"),
        absmag=("abs_g", "m_g", "mg_abs", "gabs"),
        mag=("phot_g_mean_mag", "gmag", "g"),
        xlabel=r"$G_\mathrm{BP} - G_\mathrm{RP}$ (mag)",
        ylabel=r"$M_G$ (mag)",
    ),
    "johnson": dict(
        colour=("b_v", "b-v", "bv"),
        blue=("bmag", "b"),
        red=("vmag", "v"),
        absmag=("abs_v", "m_v", "mv_abs", "vabs"),
        mag=("vmag", "v"),
        xlabel=r"$B - V$ (mag)",
        ylabel=r"$M_V$ (mag)",
    ),
}


def colour_magnitude_diagram(data=None, *, colour=None, absmag=None, parallax=None, system="gaia", stage=None,
                             flags=None, ax=None, palette="default", mark_flagged=True, label_column=None,
                             label_rows=None, labels=None, xlim=None, ylim=None, title=None, legend=True,
                             caption=True, marker_size=None, figsize=(7.5, 7.0)):
    """Draw a colour-absolute-magnitude diagram with the stars coloured by stage.

    Parameters
    ----------
    data : astropy.table.Table or mapping of arrays, optional
        For ``system="gaia"``: ``bp_rp`` (or ``phot_bp_mean_mag`` and ``phot_rp_mean_mag``) and an
        absolute ``abs_g``, or an apparent ``phot_g_mean_mag``/``gmag`` with ``parallax`` (mas).
        For ``system="johnson"``: ``b_v`` (or ``bmag``, ``vmag``) and ``abs_v`` or ``vmag`` with
        ``parallax``/``plx``/``plx_mas``.
    colour, absmag, parallax : array_like, optional
        Explicit values (mag, mag, mas).
    system : {"gaia", "johnson"}

    Notes
    -----
    No stage regions are drawn here: carrying the (Teff, L) boundaries into colour and absolute
    magnitude needs colour-Teff relations and bolometric corrections with their own validity ranges
    (the derive layer), and regions mapped that way would hide those extrapolations. The
    magnitudes are not corrected for extinction unless the columns already are; the caption says
    so. Stars with a non-positive parallax are not shown (and counted in the caption).

    Returns
    -------
    matplotlib.axes.Axes
    """
    if system not in _CMD_SYSTEMS:
        raise HrstageInputError(f"system must be one of {', '.join(_CMD_SYSTEMS)}, not {system!r}")
    spec = _CMD_SYSTEMS[system]
    pal = get_palette(palette)
    c = None if colour is None else np.atleast_1d(np.asarray(colour, dtype=float))
    if c is None and data is not None:
        c = column(data, spec["colour"])
        if c is None:
            b, r = column(data, spec["blue"]), column(data, spec["red"])
            if b is not None and r is not None:
                c = b - r
    if c is None:
        raise HrstageInputError(f"no colour: give a {spec['colour'][0]!r} column (or the two magnitudes), or colour=")
    m = None if absmag is None else np.atleast_1d(np.asarray(absmag, dtype=float))
    used_parallax = False
    if m is None and data is not None:
        m = column(data, spec["absmag"])
        if m is None:
            app = column(data, spec["mag"])
            plx = parallax if parallax is not None else column(data, ("parallax", "plx", "plx_mas"))
            if app is not None and plx is not None:
                plx = np.asarray(plx, dtype=float)
                with np.errstate(divide="ignore", invalid="ignore"):
                    m = np.where(plx > 0, app + 5.0 * np.log10(plx) - 10.0, np.nan)
                used_parallax = True
    if m is None:
        raise HrstageInputError(
            f"no absolute magnitude: give {spec['absmag'][0]!r}, or {spec['mag'][0]!r} with 'parallax' (mas), or absmag="
        )
    if c.size != m.size:
        raise HrstageInputError(f"colour has {c.size} values but the magnitudes have {m.size}")
    st = None
    if stage is not None:
        st = np.asarray([str(v) for v in np.asarray(stage, dtype=object).ravel()], dtype=object)
    elif data is not None:
        st = column(data, ("stage",), kind="text")
    fl = np.atleast_1d(np.asarray(flags)).astype(np.int64) if flags is not None else (
        column(data, ("flags",), kind="int") if data is not None else None)
    if fl is None:
        fl = np.zeros(c.size, dtype=np.int64)

    class _S:  # minimal view for _draw_flags
        pass

    s = _S()
    s.flags, s.verdict = fl, (column(data, ("sptype_verdict",), kind="text") if data is not None else None)
    ax, own = _setup_axes(ax, figsize)
    ax.set_xlim(xlim if xlim is not None else _limits(c, (-0.5, 3.5) if system == "gaia" else (-0.4, 2.0), 0.1, (-1.5, 6.5)))
    ax.set_ylim(ylim if ylim is not None else _limits(m, (16.0, -6.0), 0.5, (-12.0, 22.0)))
    ax.set_xlabel(spec["xlabel"])
    ax.set_ylabel(spec["ylabel"])
    ax.minorticks_on()
    ax.tick_params(which="both", direction="in", right=True, top=True)
    size = marker_size if marker_size is not None else _marker_size(int(np.isfinite(c).sum()))
    handles = _draw_points(ax, c, m, st, None, pal, "stage", size, rasterize=c.size > 5000)
    handles += _draw_flags(ax, c, m, s, mark_flagged, size, stage=st)
    if title:
        ax.set_title(title)
    if legend:
        _legend(ax, handles, own)
    if caption:
        n_missing = int((~(np.isfinite(c) & np.isfinite(m))).sum())
        extra = "no extinction correction applied" + (" (absolute magnitudes from parallaxes)" if used_parallax else "")
        _caption(ax, _caption_text(None, n_missing, extra))
    _label_targets(ax, data, c.size, c, m, label_column, label_rows, labels)
    return ax
