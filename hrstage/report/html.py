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

__all__ = ["render_report", "write_report", "verdict_words", "DEFAULT_MAX_ROWS", "INFORMATIONAL_BITS", "VERDICT_WORDS"]

#: Rows shown per star table before the "N more" line.
DEFAULT_MAX_ROWS = 50

#: Flag bits that describe an assumption made for (nearly) every star rather than a problem;
#: they are counted in the flag summary but do not put a star in the flagged-stars table.
INFORMATIONAL_BITS = F.NO_METALLICITY | F.NO_EXTINCTION

_ID_CANDIDATES = ("id", "name", "star", "star_id", "source_id", "designation", "objid", "hip", "kic", "tic")
_SPTYPE_CANDIDATES = ("sptype", "sp_type", "spt", "spectral_type", "mk_type", "spectype")
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
figure{margin:1em 0}figure img,figure svg{width:100%;height:auto;border:1px solid #ddd}
h3{font-size:1.05em;margin:1.2em 0 .2em}
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


def _more_line(n_more, what, catalogue=None, prefix=""):
    if n_more <= 0:
        return ""
    where = (f'all of them are in <a href="{esc(catalogue)}"><code>{esc(Path(str(catalogue)).name)}</code></a>'
             if catalogue else "all of them are in the tagged catalogue")
    return (f'<p class="more">{n_more} more {esc(what)} not shown ({where}: rows with '
            f"<code>{esc(prefix)}flags</code> &ne; 0, reasons in <code>{esc(prefix)}flag_text</code>).</p>")


def _catalogue_pointer(catalogue, prefix=""):
    if not catalogue:
        return ""
    return (f'<p>The full list is in the tagged catalogue <a href="{esc(catalogue)}"><code>'
            f"{esc(Path(str(catalogue)).name)}</code></a> (every row with <code>{esc(prefix)}flags</code> &ne; 0; "
            f"reasons in <code>{esc(prefix)}flag_text</code>).</p>")


def _stage_label(name) -> str:
    """Readable name of a stage (any stage of :mod:`hrstage.stages`, also ones added later)."""
    return LABELS.get(name, str(name).replace("_", " ").capitalize())


#: Verdicts of :mod:`hrstage.sptype.check` in words (any other verdict is spelled out from its name).
VERDICT_WORDS = {
    "consistent": "Consistent with the HR position",
    "lumclass_conflict": "Luminosity class disagrees with the HR position",
    "tclass_conflict": "Temperature type disagrees with the measured Teff",
    "tclass_and_lumclass_conflict": "Temperature type and luminosity class both disagree",
    "stage_conflict": "The type excludes the HR stage",
    "not_checkable": "Not checkable",
    "not_checkable:no_type": "Not checkable: no type given",
    "not_checkable:unparsed": "Not checkable: type not understood",
    "not_checkable:no_hr_position": "Not checkable: no HR position",
    "not_checkable:no_calibration": "Not checkable: no calibration for this kind of type",
    "not_checkable:no_lumclass": "Not checkable: no luminosity class given",
    "not_checkable:outside_calibration": "Not checkable: outside the calibration",
    "not_checkable:stage_undecided": "Not checkable: the stage check is undecided",
    "": "No verdict",
}


def verdict_words(verdict) -> str:
    """A verdict code of the MK check as a phrase (``lumclass_conflict`` -> "Luminosity class ...")."""
    v = str(verdict)
    if v in VERDICT_WORDS:
        return VERDICT_WORDS[v]
    head, _, why = v.partition(":")
    text = head.replace("_", " ").capitalize()
    return f"{text}: {why.replace('_', ' ')}" if why else text


def _is_conflict(verdict):
    """Every conflict verdict of hrstage.sptype ends in '_conflict' (lumclass, tclass, both, stage)."""
    return np.char.endswith(np.asarray(verdict, dtype=str), "_conflict")


def _main_class(lumclass: str) -> str:
    """The calibrated class a catalogued class is checked as: 'IIIb' -> 'III', 'III-IV' -> 'III'."""
    import re

    first = str(lumclass).split("-")[0].split("/")[0]
    if first in ("Ia", "Iab", "Ib"):
        return first
    if first in ("Ia0", "Ia+", "0", "I"):
        return "Ia" if first != "I" else "Iab"
    return re.sub(r"(ab|a|b)$", "", first) if first not in ("Iab",) else first


def _classes_of(lumclass: str) -> set:
    """Every calibrated class a catalogued class (or class range) covers."""
    order = ["Ia", "Iab", "Ib", "II", "III", "IV", "V"]
    parts = [_main_class(p) for p in str(lumclass).split("-") if p]
    idx = [order.index(p) for p in parts if p in order]
    if not idx:
        return set()
    return set(order[min(idx):max(idx) + 1])


def _mk_columns(table, sptype_column):
    """What the report says about catalogued MK types, or None without an MK check."""
    if "sptype_verdict" not in table.colnames:
        return None
    n = len(table)
    verdict = _text_column(table, "sptype_verdict")
    spc = _find(table, _SPTYPE_CANDIDATES, sptype_column, "sptype_column", role="sptype")
    raw = _text_column(table, spc) if spc else (
        _text_column(table, "sptype_parsed") if "sptype_parsed" in table.colnames else np.full(n, "", dtype=object))
    parsed = _text_column(table, "sptype_parsed") if "sptype_parsed" in table.colnames else raw
    sugg = _text_column(table, "sptype_suggested") if "sptype_suggested" in table.colnames else np.full(n, "", dtype=object)
    why = _text_column(table, "sptype_reason") if "sptype_reason" in table.colnames else np.full(n, "", dtype=object)
    nsig = _float_column(table, "sptype_nsigma")
    if nsig is None:
        nsig = np.full(n, np.nan)
    teff = _float_column(table, "teff_used")
    logl = _float_column(table, "logl_used")
    logt_err = _float_column(table, "logt_err")
    logl_err = _float_column(table, "logl_err")
    conflict = _is_conflict(verdict)
    # a suggestion is news only when it is not the catalogued class (G9IIIb -> "III" is not)
    sugg = sugg.copy()
    cls = np.full(n, "", dtype=object)
    for i in np.flatnonzero((sugg != "") | conflict):
        from ..sptype import parse

        p = parse(parsed[i] or raw[i])
        cls[i] = p.lumclass if p.ok else ""
        if sugg[i] and cls[i] and _main_class(sugg[i]) in _classes_of(cls[i]):
            sugg[i] = ""
    return dict(verdict=verdict, raw=raw, parsed=parsed, suggested=sugg, reason=why, nsigma=nsig, conflict=conflict,
                teff=teff, logl=logl, logt_err=logt_err, logl_err=logl_err, lumclass=cls)


def _mk_reason(mk, i) -> str:
    """Why a catalogued type conflicts: what the type implies against what was measured (HTML)."""
    from ..sptype import parse
    from ..sptype.calibration import calibration

    typ = mk["raw"][i] or mk["parsed"][i]
    p = parse(mk["parsed"][i] or mk["raw"][i])
    implied = ""
    if p.ok and np.isfinite(p.numeric):
        cal = calibration()
        main = _main_class(p.lumclass) if p.lumclass else "V"
        if main in cal.classes:
            t_imp = float(cal.teff(np.array([p.numeric]), main)[0])
            l_imp = float(cal.logl(np.array([p.numeric]), main)[0])
            if np.isfinite(t_imp):
                implied = f"Teff &asymp; {t_imp:.0f} K"
                if np.isfinite(l_imp):
                    implied += f", log L/L<sub>&#9737;</sub> &asymp; {l_imp:.2f}"
                implied += f" (class {esc(main)}{'' if p.lumclass else ', none given: dwarf assumed'})"
    measured = ""
    t, ll = (mk["teff"][i] if mk["teff"] is not None else np.nan), (mk["logl"][i] if mk["logl"] is not None else np.nan)
    if np.isfinite(t):
        measured = f"Teff {t:.0f} K"
        et = mk["logt_err"][i] if mk["logt_err"] is not None else np.nan
        if np.isfinite(et) and et > 0:
            measured += f" &plusmn; {t * np.log(10) * et:.0f}"
    if np.isfinite(ll):
        el = mk["logl_err"][i] if mk["logl_err"] is not None else np.nan
        measured += (", " if measured else "") + f"log L/L<sub>&#9737;</sub> {ll:.2f}"
        if np.isfinite(el) and el > 0:
            measured += f" &plusmn; {el:.2f}"
    bits = [f"Catalogued <code>{esc(typ)}</code>" + (f" implies {implied}" if implied else "")]
    if mk["reason"][i] and (not implied or mk["verdict"][i] == "stage_conflict"):
        bits.append(esc(mk["reason"][i]))  # types with no Teff/L calibration: the check's own words
    if measured:
        bits.append(f"measured {measured}")
    if np.isfinite(mk["nsigma"][i]):
        bits.append(f"{mk['nsigma'][i]:.1f}&sigma; apart")
    text = "; ".join(bits) + "."
    if mk["suggested"][i]:
        text += f" The position fits class {esc(mk['suggested'][i])} better."
    return text


def _flag_groups(flags, stage, prob, mk, notable):
    """Flagged rows by severity: [(key, title, explanation, rows)], each row in its first group.

    Within a group the rows are sorted: MK conflicts by the size of the disagreement, the others
    by increasing stage probability (least certain first), then by row.
    """
    from ..plot.hrd import CBM_MARKED_STAGES

    n = flags.size
    p = np.full(n, np.nan) if prob is None else prob
    left = notable.copy()
    out = []
    conflict = ((flags & F.SPTYPE_CONFLICT) != 0) | (mk["conflict"] if mk is not None else False)
    cbm = ((flags & F.COOL_BUT_MASSIVE) != 0) & np.isin(stage, CBM_MARKED_STAGES)
    low = (flags & F.LOW_PROBABILITY) != 0
    cbm_words = " or ".join(_stage_label(s).lower() for s in CBM_MARKED_STAGES)
    spec = [
        ("mk", "Catalogued MK type in conflict", conflict,
         "The catalogued spectral type disagrees with the HR position: the type, the parallax, extinction or "
         "binarity may be at fault."),
        ("cool-massive", f"Cool but massive, labelled {cbm_words}", cbm,
         "Too luminous or too massive for a main-sequence star of its Teff, yet labelled "
         f"{cbm_words}: the label itself is in doubt (a giant, or a poor luminosity?)."),
        ("low-probability", "Uncertain label", low,
         "The most likely stage has a probability below 0.6: the star lies within its errors of other stages."),
        ("other", "Other flags", np.ones(n, dtype=bool),
         "Flags that qualify the label rather than contradict it (near a boundary, possible binary, "
         "extrapolated relations, poor parallax, ...)."),
    ]
    for key, title, mask, explain in spec:
        rows = np.flatnonzero(left & mask)
        left &= ~mask
        if key == "mk" and mk is not None:
            order = np.lexsort((rows, -np.nan_to_num(mk["nsigma"][rows], nan=-1.0)))
        else:
            order = np.lexsort((rows, np.nan_to_num(p[rows], nan=2.0)))
        out.append((key, title, explain, rows[order]))
    return out


def _cautions(count, n_unc):
    """The cautions that apply (only the counts above zero), the general one first."""
    out = [
        "<strong>Stage labels are indicative.</strong> They come from each star's position on the HR "
        "diagram relative to boundaries drawn from analytic stellar relations (Tout et al. 1996; "
        "Hurley, Pols &amp; Tout 2000) and <strong>do not replace a spectroscopic analysis</strong>."
    ]

    def stars(k):
        return f"{k} star{'s' if k != 1 else ''}"

    def join(items):
        items = [t for t in items if t]
        return items[0] if len(items) == 1 else ", ".join(items[:-1]) + " and " + items[-1]

    low, nonpos = count(F.LOW_PARALLAX_SNR), count(F.NONPOSITIVE_PARALLAX)
    if low or nonpos:
        out.append("Poor parallaxes: " + join([
            f"{stars(low)} with a parallax signal-to-noise below the threshold (LOW_PARALLAX_SNR)" if low else "",
            f"{stars(nonpos)} with a zero or negative parallax (NONPOSITIVE_PARALLAX)" if nonpos else ""])
            + ". Their luminosities, and so their stages, are unreliable.")
    extrap = [(F.OUTSIDE_VALIDITY, "outside the validity range of the stellar relations (OUTSIDE_VALIDITY)"),
              (F.COLOUR_OUT_OF_RANGE, "with a colour outside the colour&ndash;Teff calibration (COLOUR_OUT_OF_RANGE)"),
              (F.BC_FALLBACK, "with a fallback bolometric correction (BC_FALLBACK)"),
              (F.COLOUR_SATURATED, "with a saturated colour (a red giant's B&minus;V that cooler M giants "
                                   "share, or an O&ndash;B star's Gaia BP&minus;RP): Teff and L indicative "
                                   "(COLOUR_SATURATED)"),
              (F.METALLICITY_CLIPPED, "with their metallicity clipped to the fits' range (METALLICITY_CLIPPED)")]
    items = [f"{stars(count(b))} {t}" for b, t in extrap if count(b)]
    if items:
        out.append("Extrapolated relations: " + join(items) + ".")
    nofeh, noext = count(F.NO_METALLICITY), count(F.NO_EXTINCTION)
    if nofeh or noext:
        out.append("Assumptions: " + join([
            f"{stars(nofeh)} without [Fe/H] placed against the solar-metallicity boundaries" if nofeh else "",
            f"{stars(noext)} with no extinction applied" if noext else ""]) + ".")
    lowp, near = count(F.LOW_PROBABILITY), count(F.NEAR_BOUNDARY)
    items = [f"{stars(lowp)} with a best-stage probability below 0.6" if lowp else "",
             f"{stars(near)} within their errors of a boundary" if near else "",
             f"{stars(n_unc)} that could not be classified" if n_unc else ""]
    if any(items):
        out.append("Uncertain labels: " + join(items) + ".")
    young = count(F.YOUNG_OR_EVOLVED) if hasattr(F, "YOUNG_OR_EVOLVED") else 0
    if young:
        out.append(f"Young or evolved: {stars(young)} {'lies' if young == 1 else 'lie'} where young (pre-main-sequence) and evolved stars "
                   "share the HR diagram (YOUNG_OR_EVOLVED); their label follows the assumed share of young "
                   "stars (a field population unless the run said otherwise) and both probabilities are given.")
    hbms = count(F.HB_OR_MAIN_SEQUENCE)
    if hbms:
        out.append(f"Blue horizontal branch or main sequence: {stars(hbms)} {'lies' if hbms == 1 else 'lie'} where, at their metallicity, the "
                   "core-helium-burning band overlaps the main sequence (HB_OR_MAIN_SEQUENCE); their label follows "
                   "the assumed share of horizontal-branch stars, both probabilities are given, and log g would "
                   "separate them.")
    return out


def _settings_from_meta(table):
    """The options recorded by the engine in the table meta (``hrstage_options``, JSON), if any."""
    import json

    raw = getattr(table, "meta", {}).get("hrstage_options")
    if not raw:
        return None
    try:
        opts = json.loads(raw) if isinstance(raw, str) else dict(raw)
    except (ValueError, TypeError):
        return {"hrstage_options": raw}
    return opts if isinstance(opts, dict) else {"hrstage_options": raw}


def _param_notes():
    """First sentence of each parameter's description in the StageParams docstring."""
    import re

    from ..stagemap import StageParams

    notes, current = {}, None
    for line in (StageParams.__doc__ or "").splitlines():
        m = re.match(r"^    (\w+(?:, \w+)*) : (.*)$", line)
        if m:
            current = [k.strip() for k in m.group(1).split(",")]
            continue
        if current and line.startswith("        ") and line.strip():
            for k in current:
                notes[k] = (notes.get(k, "") + " " + line.strip()).strip()
        elif not line.strip():
            current = None
    return {k: (v.split(". ")[0].rstrip(".") + ".") for k, v in notes.items()}


def _stage_params_html(stage_map, feh, table):
    """Table of the stage-map tolerances the labels and the figure were decided with."""
    from dataclasses import fields

    sm = stage_map
    if sm is None:
        try:
            from ..stagemap import stage_map as build

            if isinstance(feh, str):
                values = _float_column(table, "feh_used")
                feh = float(np.nanmedian(values)) if values is not None and np.isfinite(values).any() else 0.0
            sm = build(feh=float(feh))
        except Exception as exc:  # a figure-less report of a table we cannot map still renders
            return f'<p class="more">Stage-map tolerances not available: {esc(exc)}</p>'
    params = getattr(sm, "params", None)
    if params is None:
        return ""
    notes = _param_notes()
    rows = [[f"<code>{esc(f.name)}</code>", esc(getattr(params, f.name)), esc(notes.get(f.name, ""))]
            for f in fields(params)]
    head = (f"<h3>Stage-map tolerances</h3><p>The boundaries at [Fe/H] = {float(getattr(sm, 'feh', 0.0)):+.2f} "
            "were drawn with these parameters (<code>hrstage.stagemap.StageParams</code>; reasons in "
            "the stage-map documentation).</p>")
    return head + _table(["Parameter", "Value", "Meaning"], rows, table_id="stage-params")


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


def _branch_section(table, n):
    """Giants per branch (``branch`` column of hrstage.branches), with the median branch probability."""
    from ..branches import BRANCHES, LABELS as BLABELS, NOT_GIANT

    br = _text_column(table, "branch")
    bp = _float_column(table, "branch_prob") if "branch_prob" in table.colnames else None
    giants = br[(br != "") & (br != BRANCHES[NOT_GIANT])]
    rows = []
    for b in BRANCHES[:NOT_GIANT]:
        m = br == b
        k = int(m.sum())
        if k == 0:
            continue
        med = _fmt(np.nanmedian(bp[m]), 2) if bp is not None and np.isfinite(bp[m]).any() else ""
        rows.append([esc(BLABELS[b]), f"<code>{esc(b)}</code>", str(k),
                     f"{100.0 * k / max(len(giants), 1):.1f} %", med])
    return ('<section id="branches"><h2>Giants per branch</h2>'
            + _table(["Branch", "Value", "Stars", "Share of giants", "Median P(branch)"], rows,
                     table_id="branch-counts", num_cols=(2, 3, 4), total=["Total", "", str(len(giants)), "100.0 %" if len(giants) else "", ""])
            + "<p>From the HR position alone the first-ascent giant branch and the red clump overlap; a "
              "branch is named when its phase is more probable than the other two together, else "
              "<code>unresolved</code>. Indicative, not a spectroscopic or asteroseismic classification.</p>"
            + "</section>")


def render_report(table, *, title="hrstage stage report", settings=None, stage_map=None, feh=0.0,
                  id_column=None, sptype_column=None, max_rows=DEFAULT_MAX_ROWS, figure=None,
                  figure_format="png", generated_at=None, catalogue=None) -> str:
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
        Rows shown per star table (each severity group of flagged stars, the MK conflicts) before
        a "N more ... not shown" line (default 50).
    figure : matplotlib Figure or Axes, False or None
        None: draw the HR diagram with :func:`hrstage.plot.hr_diagram`; a Figure/Axes: embed that
        one; False: no figure.
    figure_format : {"png", "svg"}
        How the figure is embedded (base64 PNG or inline SVG).
    generated_at : datetime.datetime, optional
        Time stamp to print (default: now, UTC).
    catalogue : str or pathlib.Path, optional
        The written tagged catalogue holding every row; the report links to it where a table is
        cut (:func:`write_report` makes the link relative to the report's folder).

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
    # the reasons with each star's numbers when the catalogue has them (flag_detail), else in words
    reason_col = next((c for c in ("flag_detail", "flag_text") if c in table.colnames), None)
    flag_text = _text_column(table, reason_col) if reason_col else None
    prefix = ""
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
    parts.append('<section id="cautions" class="cautions"><h2>Cautions</h2><ul>'
                 + "".join(f"<li>{c}</li>" for c in _cautions(count, n_unc)) + "</ul></section>")

    # ---- stars per stage ------------------------------------------------------------------
    from ..plot.palette import get_palette

    pal = get_palette("default")
    rows = []
    for s in STAGES:
        m = stage == s
        k = int(m.sum())
        if k == 0:
            continue
        # a probability of "unclassified" says nothing about a stage: left blank
        med = (_fmt(np.nanmedian(prob[m]), 2) if prob is not None and s != "unclassified"
               and np.isfinite(prob[m]).any() else "")
        rows.append([f'<span class="swatch" style="background:{pal.colour(s)}"></span>{esc(_stage_label(s))}',
                     f"<code>{esc(s)}</code>", str(k), f"{100.0 * k / n:.1f} %", med])
    missing = int((stage == "").sum())
    if missing:
        rows.append(["(no label)", "", str(missing), f"{100.0 * missing / n:.1f} %", ""])
    parts.append('<section id="summary"><h2>Stars per stage</h2>')
    parts.append(_table(["Stage", "Value", "Stars", "Share", "Median P(stage)"], rows, table_id="stage-counts",
                        num_cols=(2, 3, 4), total=["Total", "", str(n), "100.0 %" if n else "", ""]))
    parts.append("</section>")
    if "branch" in table.colnames:
        parts.append(_branch_section(table, n))

    # ---- figure -----------------------------------------------------------------------------
    fig_html, _ = _figure_html(table, stage_map, feh, figure, figure_format)
    if fig_html:
        parts.append('<section id="figure"><h2>HR diagram</h2><figure>' + fig_html
                     + "<figcaption>Points are coloured and shaped by stage; shaded areas are the stage regions "
                     "and black lines the model boundaries drawn for the classification (named on the figure "
                     "or in the legend). Open symbols mark flagged stars.</figcaption></figure></section>")

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

    # ---- MK-type facts used by the flagged-star and conflict tables --------------------------
    mk = _mk_columns(table, sptype_column)

    # ---- flagged stars, most serious first ---------------------------------------------------
    parts.append('<section id="flagged"><h2>Flagged stars</h2>')
    notable = (flags & ~INFORMATIONAL_BITS) != 0
    if mk is not None:
        notable |= mk["conflict"]
    if notable.any():
        parts.append(f"<p>{int(notable.sum())} star(s) carry at least one flag other than the assumptions "
                     "(no [Fe/H], no extinction). They are grouped by how much the flag matters, each star in "
                     "its most serious group only.</p>")
        parts.append(_catalogue_pointer(catalogue, prefix))
        groups = _flag_groups(flags, stage, prob, mk, notable)
        for key, title_, explain, rows_ in groups:
            if not rows_.size:
                continue
            parts.append(f'<h3 id="group-{key}">{esc(title_)} ({rows_.size})</h3><p class="meta">{explain}</p>')
            trows = []
            for i in rows_[:max_rows]:
                names = ", ".join(_FLAG_NAMES.get(b, hex(b)) for b in F.DESCRIPTIONS if flags[i] & b & ~INFORMATIONAL_BITS)
                if key == "mk":
                    reason = _mk_reason(mk, i)
                else:
                    reason = (flag_text[i] if flag_text is not None and flag_text[i]
                              else F.describe(flags[i] & ~INFORMATIONAL_BITS))
                    reason = esc(reason)
                trows.append([str(i), esc(ids[i]), esc(_stage_label(stage[i]) if stage[i] else ""),
                              _fmt(prob[i]) if prob is not None else "", f"<code>{esc(names)}</code>", reason])
            parts.append(_table(["Row", "Star", "Stage", "P(stage)", "Flags", "Why"], trows,
                                table_id=f"flagged-{key}", num_cols=(0, 3)))
            parts.append(_more_line(rows_.size - min(rows_.size, max_rows), f"stars of this group",
                                    catalogue, prefix))
    else:
        parts.append("<p>No flagged stars.</p>")
    parts.append("</section>")

    # ---- spectral types ---------------------------------------------------------------------
    if mk is not None:
        verdict = mk["verdict"]
        kinds = {}
        for v in verdict:
            key = v.split(":", 1)[0] if v.startswith("not_checkable") else v
            kinds[key] = kinds.get(key, 0) + 1
        parts.append('<section id="sptype"><h2>Catalogued MK types against the HR position</h2>')
        parts.append(_table(["Verdict", "Stars"],
                            [[esc(verdict_words(k)), str(v)] for k, v in sorted(kinds.items(), key=lambda kv: -kv[1])],
                            table_id="sptype-verdicts", num_cols=(1,)))
        bad = np.flatnonzero(mk["conflict"])
        if bad.size:
            bad = bad[np.argsort(-np.nan_to_num(mk["nsigma"][bad], nan=-1.0), kind="stable")]
            rows = []
            for i in bad[:max_rows]:
                rows.append([str(i), esc(ids[i]), esc(mk["raw"][i]), esc(verdict_words(verdict[i])),
                             esc(mk["suggested"][i]), _fmt(mk["nsigma"][i], 1), esc(_stage_label(stage[i])),
                             _mk_reason(mk, i)])
            parts.append(_table(["Row", "Star", "Catalogued type", "Verdict", "Suggested class", "n sigma",
                                 "HR stage", "Why"], rows, table_id="sptype-conflicts", num_cols=(0, 5)))
            parts.append(_more_line(bad.size - min(bad.size, max_rows), "spectral-type conflicts", catalogue, prefix))
        else:
            parts.append("<p>No catalogued type conflicts with the HR position.</p>")
        parts.append("</section>")

    # ---- settings and versions ---------------------------------------------------------------
    parts.append('<section id="settings"><h2>Settings and versions</h2>')
    if settings is None:
        settings = _settings_from_meta(table)
    srows = [[f"<code>{esc(k)}</code>", esc(v)] for k, v in (settings or {}).items()]
    if srows:
        parts.append(_table(["Setting", "Value"], srows, table_id="settings-table"))
    else:
        parts.append("<p>No settings recorded.</p>")
    parts.append(_stage_params_html(stage_map, feh, table))
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
    cat = options.pop("catalogue", None)
    if cat is not None:
        import os

        # a link that still works when the report and the catalogue are moved together
        cat = Path(os.path.relpath(Path(cat).resolve(), parent.resolve())).as_posix()
    text = render_report(table, title=title, settings=settings, stage_map=stage_map, catalogue=cat, **options)
    from ..catalog.atomic import atomic_output

    with atomic_output(path, overwrite=overwrite) as tmp:
        with open(tmp, "w", encoding="utf-8") as fh:
            fh.write(text)
    return path
