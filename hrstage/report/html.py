"""A self-contained HTML report of a tagged catalogue.

One HTML file, readable offline: inline CSS, the HR diagram embedded as a base64 PNG (or inline
SVG), no scripts, no fonts or style sheets fetched from anywhere. Every piece of catalogue text
(star names, column names, MK types, flag reasons, settings) goes through :func:`html.escape`.

Sections, in order: cautions; stars per stage; the HR diagram; flags (counts per bit); flagged
stars; spectral-type conflicts (when MK types were checked); settings, versions and the
catalogue's columns. Long tables are cut at ``max_rows`` rows with a line saying how many more
there are (they are all in the tagged catalogue).
"""

from __future__ import annotations

import base64
import datetime as _dt
import html
import io
import platform
from pathlib import Path

import numpy as np

from .. import flags as F
from ..errors import HrstageInputError
from ..stages import LABELS, STAGES

__all__ = ["render_report", "write_report", "DEFAULT_MAX_ROWS", "INFORMATIONAL_BITS"]

#: Rows shown per star table before the "N more" line.
DEFAULT_MAX_ROWS = 200

#: Flag bits that describe an assumption made for (nearly) every star rather than a problem;
#: they are counted in the flag summary but do not put a star in the flagged-stars table.
INFORMATIONAL_BITS = F.NO_METALLICITY | F.NO_EXTINCTION

_ID_CANDIDATES = ("id", "name", "star", "star_id", "source_id", "designation", "objid", "hip", "kic", "tic")
_SPTYPE_CANDIDATES = ("sptype", "sp_type", "spt", "spectral_type", "mk_type", "spectype")
def _is_conflict(verdict):
    """Every conflict verdict of hrstage.sptype ends in '_conflict' (lumclass, tclass, both, stage)."""
    return np.array([str(v).endswith("_conflict") for v in verdict], dtype=bool)


_FLAG_NAMES = {
    getattr(F, n): n for n in dir(F) if n.isupper() and isinstance(getattr(F, n), int) and getattr(F, n) in F.DESCRIPTIONS
}

_CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Helvetica,Arial,sans-serif;margin:0 auto;max-width:1100px;
padding:1.2em 1.6em;color:#1d1d1d;background:#fff;line-height:1.4}
h1{font-size:1.6em;margin:.2em 0}h2{font-size:1.2em;margin-top:1.6em;border-bottom:1px solid #ccc;padding-bottom:.2em}
.meta{color:#555;font-size:.92em}
.cautions{background:#fff6e0;border-left:5px solid #c9a227;padding:.6em 1em;margin:1em 0}
.cautions li{margin:.25em 0}
table{border-collapse:collapse;margin:.6em 0;font-size:.9em}
th,td{border:1px solid #d0d0d0;padding:.25em .6em;text-align:left;vertical-align:top}
th{background:#f0f0f0}td.num{text-align:right;font-variant-numeric:tabular-nums}
tr.total td{font-weight:bold;background:#fafafa}
.swatch{display:inline-block;width:.9em;height:.9em;border:1px solid #333;margin-right:.4em;vertical-align:-.1em}
.more{color:#555;font-style:italic}
figure{margin:1em 0}figure img,figure svg{max-width:100%;height:auto;border:1px solid #ddd}
figcaption{color:#444;font-size:.9em;margin-top:.3em}
code{font-family:ui-monospace,Menlo,Consolas,monospace;font-size:.95em}
footer{margin-top:2em;color:#777;font-size:.85em}
"""


#: Bidirectional-text controls (U+202A..U+202E, U+2066..U+2069, U+200E/F, U+061C): in catalogue
#: text they would reorder what the page shows; written as visible code points instead.
_BIDI_CONTROLS = {c: f"[U+{c:04X}]" for c in (*range(0x202A, 0x202F), *range(0x2066, 0x206A), 0x200E, 0x200F, 0x061C)}


def esc(value) -> str:
    """Escape any value for HTML text or attribute context (bidirectional controls shown as
    ``[U+202E]``, never obeyed)."""
    if isinstance(value, bytes):
        value = value.decode("utf-8", "replace")
    return html.escape(str(value).translate(_BIDI_CONTROLS), quote=True)


def _text_column(table, name):
    col = table[name]
    mask = np.ma.getmaskarray(col) if hasattr(col, "mask") else np.zeros(len(col), bool)
    data = np.ma.getdata(col)
    out = np.array([v.decode("utf-8", "replace") if isinstance(v, bytes) else str(v) for v in np.asarray(data).ravel()],
                   dtype=object)
    out[np.asarray(mask).ravel()] = ""
    return out


def _float_column(table, name):
    if name not in table.colnames:
        return None
    col = table[name]
    arr = np.array(np.ma.getdata(col), dtype=float)
    if hasattr(col, "mask"):
        arr[np.ma.getmaskarray(col)] = np.nan
    return arr


def _role_from_meta(table, role):
    """Column the pipeline mapped to ``role`` (table meta ``hrstage_roles``: "teff=T,id=NAME,...")."""
    roles = getattr(table, "meta", {}).get("hrstage_roles", "")
    if not isinstance(roles, str):
        return None
    for item in roles.split(","):
        key, _, col = item.partition("=")
        if key.strip() == role and col.strip() in table.colnames:
            return col.strip()
    return None


def _find(table, candidates, given=None, what="column", role=None):
    if given is not None:
        if given not in table.colnames:
            raise HrstageInputError(f"{what} {given!r} is not a column of the table")
        return given
    if role is not None:
        mapped = _role_from_meta(table, role)
        if mapped is not None:
            return mapped
    lower = {c.lower(): c for c in table.colnames}
    for c in candidates:
        if c in lower:
            return lower[c]
    return None


def _fmt(v, digits=2):
    if v is None:
        return ""
    try:
        f = float(v)
    except (TypeError, ValueError):
        return esc(v)
    if not np.isfinite(f):
        return ""
    return f"{f:.{digits}f}"


def _table(headers, rows, *, table_id, num_cols=(), total=None, caption=None):
    out = [f'<table id="{esc(table_id)}">']
    if caption:
        out.append(f"<caption>{caption}</caption>")
    out.append("<thead><tr>" + "".join(f"<th>{esc(h)}</th>" for h in headers) + "</tr></thead><tbody>")
    for r in rows:
        cells = []
        for j, c in enumerate(r):
            cls = ' class="num"' if j in num_cols else ""
            cells.append(f"<td{cls}>{c}</td>")
        out.append("<tr>" + "".join(cells) + "</tr>")
    out.append("</tbody>")
    if total is not None:
        tcells = "".join((f'<td class="num">{c}</td>' if j in num_cols else f"<td>{c}</td>") for j, c in enumerate(total))
        out.append(f'<tfoot><tr class="total">{tcells}</tr></tfoot>')
    out.append("</table>")
    return "\n".join(out)


def _more_line(n_more, what):
    if n_more <= 0:
        return ""
    return f'<p class="more">{n_more} more {esc(what)} not shown (all of them are in the tagged catalogue).</p>'


def _versions():
    import astropy
    import matplotlib
    import scipy

    from .. import __version__

    return [
        ("hrstage", __version__),
        ("python", platform.python_version()),
        ("numpy", np.__version__),
        ("scipy", scipy.__version__),
        ("astropy", astropy.__version__),
        ("matplotlib", matplotlib.__version__),
    ]


def _figure_html(table, stage_map, feh, figure, figure_format):
    """The embedded HR diagram, or a note saying why there is none."""
    if figure is False or figure_format is None:
        return "", None
    from ..plot import hr_diagram

    try:
        if figure is None or figure is True:
            ax = hr_diagram(table, stage_map=stage_map, feh=feh, figsize=(8.0, 7.4))
            fig = ax.figure
        else:
            fig = getattr(figure, "figure", figure)
    except HrstageInputError as exc:
        return f'<p class="more">No HR diagram: {esc(exc)}</p>', None
    buf = io.BytesIO()
    if figure_format == "png":
        fig.savefig(buf, format="png", dpi=110)
        data = base64.b64encode(buf.getvalue()).decode("ascii")
        body = (f'<img id="hr-diagram" src="data:image/png;base64,{data}" '
                'alt="HR diagram of the catalogue, stars coloured and shaped by stage">')
    elif figure_format == "svg":
        fig.savefig(buf, format="svg", metadata={"Date": None})
        svg = buf.getvalue().decode("utf-8")
        svg = svg[svg.find("<svg"):]  # drop the XML prolog and DOCTYPE (no external DTD fetch)
        body = svg.replace("<svg", '<svg id="hr-diagram" role="img" aria-label="HR diagram"', 1)
    else:
        raise HrstageInputError(f"figure_format must be 'png', 'svg' or None, not {figure_format!r}")
    return body, fig


def render_report(table, *, title="hrstage stage report", settings=None, stage_map=None, feh=0.0,
                  id_column=None, sptype_column=None, max_rows=DEFAULT_MAX_ROWS, figure=None,
                  figure_format="png", generated_at=None) -> str:
    """Render the HTML report of a tagged catalogue and return it as a string.

    Parameters
    ----------
    table : astropy.table.Table
        Output of :func:`hrstage.classify` (needs ``stage``; uses ``stage_prob``, ``flags``,
        ``flag_text``, ``sptype_*`` and the position columns when present).
    title : str
        Heading of the page (escaped).
    settings : dict, optional
        The options the catalogue was classified with; shown as a table (keys and values escaped).
    stage_map : hrstage.stagemap.StageMap, optional
        Stage map for the figure (default: built for ``feh``).
    feh : float or "median"
        Metallicity of the figure's stage map (see :func:`hrstage.plot.hr_diagram`).
    id_column, sptype_column : str, optional
        Column naming the stars and column of the catalogued MK types (default: the first of
        ``id``, ``name``, ``star``, ``source_id``, ... and of ``sptype``, ``sp_type``, ``spt``, ...;
        the row number is always shown as well).
    max_rows : int
        Rows shown per star table before a "N more ... not shown" line (default 200).
    figure : matplotlib Figure or Axes, False or None
        None: draw the HR diagram with :func:`hrstage.plot.hr_diagram`; a Figure/Axes: embed that
        one; False: no figure.
    figure_format : {"png", "svg"}
        How the figure is embedded (base64 PNG or inline SVG).
    generated_at : datetime.datetime, optional
        Time stamp to print (default: now, UTC).

    Returns
    -------
    str
        A complete HTML5 document.
    """
    if not hasattr(table, "colnames"):
        raise HrstageInputError(f"render_report needs an astropy Table, not {type(table).__name__}")
    if "stage" not in table.colnames:
        raise HrstageInputError("the table has no 'stage' column: classify it first (hrstage.classify)")
    if int(max_rows) < 0:
        raise HrstageInputError("max_rows must be >= 0")
    max_rows = int(max_rows)
    n = len(table)
    stage = _text_column(table, "stage")
    unknown = sorted(set(stage[stage != ""]) - set(STAGES))
    if unknown:
        raise HrstageInputError(
            f"column 'stage' has unknown value(s) {', '.join(esc(u) for u in unknown[:5])}; expected {', '.join(STAGES)}"
        )
    flags = (np.asarray(np.ma.filled(table["flags"], 0)).astype(np.int64) if "flags" in table.colnames
             else np.zeros(n, dtype=np.int64))
    prob = _float_column(table, "stage_prob")
    idc = _find(table, _ID_CANDIDATES, id_column, "id_column", role="id")
    ids = _text_column(table, idc) if idc else np.array([""] * n, dtype=object)
    flag_text = _text_column(table, "flag_text") if "flag_text" in table.colnames else None
    when = generated_at or _dt.datetime.now(_dt.timezone.utc)
    when_s = when.strftime("%Y-%m-%d %H:%M:%S %Z").strip()

    parts = ["<!DOCTYPE html>", '<html lang="en">', "<head>", '<meta charset="utf-8">',
             '<meta name="viewport" content="width=device-width, initial-scale=1">',
             f"<title>{esc(title)}</title>", f"<style>{_CSS}</style>", "</head>", "<body>"]
    parts.append(f"<header><h1>{esc(title)}</h1>")
    parts.append(f'<p class="meta">{n} star{"s" if n != 1 else ""} &middot; generated {esc(when_s)} '
                 f"by hrstage {esc(_versions()[0][1])}</p></header>")

    # ---- cautions ---------------------------------------------------------------------------
    def count(bits):
        return int(((flags & bits) != 0).sum())

    n_unc = int(((stage == "unclassified") | (stage == "")).sum())
    cautions = [
        "<strong>Stage labels are indicative.</strong> They come from each star's position on the HR "
        "diagram relative to boundaries drawn from analytic stellar relations (Tout et al. 1996; "
        "Hurley, Pols &amp; Tout 2000) and <strong>do not replace a spectroscopic analysis</strong>.",
        f"Poor parallaxes: {count(F.LOW_PARALLAX_SNR)} star(s) have a parallax signal-to-noise below the "
        f"threshold (LOW_PARALLAX_SNR) and {count(F.NONPOSITIVE_PARALLAX)} a zero or negative parallax "
        "(NONPOSITIVE_PARALLAX); their luminosities, and so their stages, are unreliable.",
        f"Extrapolated relations: {count(F.OUTSIDE_VALIDITY)} star(s) lie outside the validity range of the "
        f"stellar relations (OUTSIDE_VALIDITY), {count(F.COLOUR_OUT_OF_RANGE)} have a colour outside the "
        f"colour&ndash;Teff calibration (COLOUR_OUT_OF_RANGE), {count(F.BC_FALLBACK)} needed a fallback "
        f"bolometric correction (BC_FALLBACK) and {count(F.METALLICITY_CLIPPED)} had their metallicity "
        "clipped (METALLICITY_CLIPPED).",
        f"Assumptions: {count(F.NO_METALLICITY)} star(s) without [Fe/H] were placed against the solar-"
        f"metallicity boundaries; {count(F.NO_EXTINCTION)} had no extinction applied.",
        f"Uncertain labels: {count(F.LOW_PROBABILITY)} star(s) have a best-stage probability below 0.6 "
        f"and {count(F.NEAR_BOUNDARY)} lie within their errors of a boundary; {n_unc} could not be classified.",
        f"Young or evolved: {count(F.YOUNG_OR_EVOLVED)} star(s) lie where young (pre-main-sequence) and "
        "evolved stars share the HR diagram (YOUNG_OR_EVOLVED); their label follows the assumed share of "
        "young stars (a field population unless the run said otherwise) and both probabilities are given.",
    ]
    parts.append('<section id="cautions" class="cautions"><h2>Cautions</h2><ul>'
                 + "".join(f"<li>{c}</li>" for c in cautions) + "</ul></section>")

    # ---- stars per stage ------------------------------------------------------------------
    from ..plot.palette import PALETTES

    pal = PALETTES["default"]
    rows = []
    for s in STAGES:
        m = stage == s
        k = int(m.sum())
        if k == 0:
            continue
        med = _fmt(np.nanmedian(prob[m]), 2) if prob is not None and np.isfinite(prob[m]).any() else ""
        rows.append([f'<span class="swatch" style="background:{pal.colour(s)}"></span>{esc(LABELS[s])}',
                     f"<code>{esc(s)}</code>", str(k), f"{100.0 * k / n:.1f} %", med])
    missing = int((stage == "").sum())
    if missing:
        rows.append(["(no label)", "", str(missing), f"{100.0 * missing / n:.1f} %", ""])
    parts.append('<section id="summary"><h2>Stars per stage</h2>')
    parts.append(_table(["Stage", "Value", "Stars", "Share", "Median P(stage)"], rows, table_id="stage-counts",
                        num_cols=(2, 3, 4), total=["Total", "", str(n), "100.0 %" if n else "", ""]))
    parts.append("</section>")

    # ---- figure -----------------------------------------------------------------------------
    fig_html, _ = _figure_html(table, stage_map, feh, figure, figure_format)
    if fig_html:
        parts.append('<section id="figure"><h2>HR diagram</h2><figure>' + fig_html
                     + "<figcaption>Points are coloured and shaped by stage; shaded areas are the stage regions "
                     "and black lines the model boundaries drawn for the classification (see the legend). "
                     "Rings mark flagged stars.</figcaption></figure></section>")

    # ---- flag summary -----------------------------------------------------------------------
    frows = []
    for bit, text in F.DESCRIPTIONS.items():
        k = count(bit)
        if k:
            frows.append([f"<code>{esc(_FLAG_NAMES.get(bit, hex(bit)))}</code>", str(k), esc(text)])
    parts.append('<section id="flag-summary"><h2>Flags</h2>')
    if frows:
        parts.append(_table(["Flag", "Stars", "Meaning"], frows, table_id="flag-counts", num_cols=(1,)))
    else:
        parts.append("<p>No star carries a flag.</p>")
    parts.append("</section>")

    # ---- flagged stars ----------------------------------------------------------------------
    notable = np.flatnonzero((flags & ~INFORMATIONAL_BITS) != 0)
    parts.append('<section id="flagged"><h2>Flagged stars</h2>')
    if notable.size:
        parts.append(f"<p>{notable.size} star(s) carry at least one flag other than the assumptions "
                     "(no [Fe/H], no extinction).</p>")
        rows = []
        for i in notable[:max_rows]:
            reason = flag_text[i] if flag_text is not None and flag_text[i] else F.describe(flags[i] & ~INFORMATIONAL_BITS)
            names = ", ".join(_FLAG_NAMES.get(b, hex(b)) for b in F.DESCRIPTIONS if flags[i] & b & ~INFORMATIONAL_BITS)
            rows.append([str(i), esc(ids[i]), esc(stage[i]), _fmt(prob[i]) if prob is not None else "",
                         f"<code>{esc(names)}</code>", esc(reason)])
        parts.append(_table(["Row", "Star", "Stage", "P(stage)", "Flags", "Reasons"], rows, table_id="flagged-stars",
                            num_cols=(0, 3)))
        parts.append(_more_line(notable.size - min(notable.size, max_rows), "flagged stars"))
    else:
        parts.append("<p>No flagged stars.</p>")
    parts.append("</section>")

    # ---- spectral types ---------------------------------------------------------------------
    if "sptype_verdict" in table.colnames:
        verdict = _text_column(table, "sptype_verdict")
        spc = _find(table, _SPTYPE_CANDIDATES, sptype_column, "sptype_column", role="sptype")
        raw = _text_column(table, spc) if spc else None
        parsed = _text_column(table, "sptype_parsed") if "sptype_parsed" in table.colnames else None
        sugg = _text_column(table, "sptype_suggested") if "sptype_suggested" in table.colnames else None
        nsig = _float_column(table, "sptype_nsigma")
        kinds = {}
        for v in verdict:
            key = v.split(":", 1)[0] if v.startswith("not_checkable") else v
            kinds[key] = kinds.get(key, 0) + 1
        parts.append('<section id="sptype"><h2>Catalogued MK types against the HR position</h2>')
        parts.append(_table(["Verdict", "Stars"], [[f"<code>{esc(k or '(none)')}</code>", str(v)] for k, v in sorted(kinds.items())],
                            table_id="sptype-verdicts", num_cols=(1,)))
        bad = np.flatnonzero(_is_conflict(verdict))
        why = _text_column(table, "sptype_reason") if "sptype_reason" in table.colnames else None
        if bad.size:
            rows = []
            for i in bad[:max_rows]:
                rows.append([str(i), esc(ids[i]), esc(raw[i]) if raw is not None else "",
                             esc(parsed[i]) if parsed is not None else "", f"<code>{esc(verdict[i])}</code>",
                             esc(sugg[i]) if sugg is not None else "", _fmt(nsig[i], 1) if nsig is not None else "",
                             esc(stage[i]), esc(why[i]) if why is not None else ""])
            parts.append(_table(["Row", "Star", "Catalogued type", "Read as", "Verdict", "Suggested class", "n sigma",
                                 "HR stage", "Why"], rows, table_id="sptype-conflicts", num_cols=(0, 6)))
            parts.append(_more_line(bad.size - min(bad.size, max_rows), "spectral-type conflicts"))
        else:
            parts.append("<p>No catalogued type conflicts with the HR position.</p>")
        parts.append("</section>")

    # ---- settings and versions ---------------------------------------------------------------
    parts.append('<section id="settings"><h2>Settings and versions</h2>')
    srows = [[f"<code>{esc(k)}</code>", esc(v)] for k, v in (settings or {}).items()]
    if srows:
        parts.append(_table(["Setting", "Value"], srows, table_id="settings-table"))
    else:
        parts.append("<p>No settings recorded.</p>")
    parts.append(_table(["Software", "Version"], [[esc(a), esc(b)] for a, b in _versions()], table_id="versions"))
    parts.append("<p>Catalogue columns: " + ", ".join(f"<code>{esc(c)}</code>" for c in table.colnames) + "</p>")
    parts.append("</section>")
    parts.append(f"<footer>hrstage report &middot; {esc(when_s)}. Labels are indicative; they do not replace a "
                 "spectroscopic analysis.</footer>")
    parts.append("</body></html>")
    return "\n".join(parts)


def write_report(table, path, *, title="hrstage stage report", settings=None, stage_map=None, overwrite=False,
                 **options) -> Path:
    """Write the HTML report of :func:`render_report` to ``path`` (atomically).

    Parameters
    ----------
    table : astropy.table.Table
    path : str or pathlib.Path
        Output file; must end in ``.html`` or ``.htm``.
    title, settings, stage_map
        As in :func:`render_report`.
    overwrite : bool
        Replace an existing file (default: refuse).
    **options
        Further keywords of :func:`render_report`.

    Returns
    -------
    pathlib.Path
    """
    path = Path(path)
    if path.suffix.lower() not in (".html", ".htm"):
        raise HrstageInputError(f"{path.name}: a report is an HTML file; use a .html suffix")
    parent = path.parent if str(path.parent) else Path(".")
    if not parent.is_dir():
        raise HrstageInputError(f"{path}: directory {parent} does not exist")
    if path.exists() and not overwrite:
        raise HrstageInputError(f"{path} exists; pass overwrite=True to replace it")
    text = render_report(table, title=title, settings=settings, stage_map=stage_map, **options)
    from ..catalog.atomic import atomic_output

    with atomic_output(path, overwrite=overwrite) as tmp:
        with open(tmp, "w", encoding="utf-8") as fh:
            fh.write(text)
    return path
