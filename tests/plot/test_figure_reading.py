"""What a reader of the HR diagram needs (issue 16, items 2, 9, 10).

Measured on the drawn artists of the figure of the bundled demo catalogue (an invented target
list, no real stars) and of the synthetic fixture: names of curves and regions cover no plotted
point and no other line, every drawn curve is named on the figure or in the legend, the legend
counts agree with the catalogue, the "cool but massive" ring appears only where it contradicts the
label, and the points can be coloured by any numeric column.
"""

import subprocess
import sys

import numpy as np
import pytest
from matplotlib.collections import PathCollection
from matplotlib.lines import Line2D
from matplotlib.path import Path as MplPath
from matplotlib.transforms import Affine2D, Bbox

from hrstage import flags as F
from hrstage.errors import HrstageInputError
from hrstage.plot import hr_diagram
from hrstage.plot.hrd import CBM_MARKED_STAGES, CURVE_SHORT
from hrstage.stages import LABELS, STAGES

NAME_KINDS = ("curve_label", "radius_label", "region_label")


def by_gid(ax, prefix):
    return [a for a in ax.findobj() if (a.get_gid() or "").startswith(prefix)]


@pytest.fixture(scope="module")
def demo_tagged():
    from astropy.table import Table

    import hrstage
    from hrstage.cli.commands import demo_catalogue_path

    return hrstage.classify(Table.read(demo_catalogue_path()))


@pytest.fixture(scope="module")
def demo_ax(demo_tagged):
    ax = hr_diagram(demo_tagged)
    ax.figure.draw_without_rendering()
    return ax


def _text_rectangle(ax, t):
    """The (possibly rotated) rectangle of a text, as a Path in display pixels, from the artist."""
    from hrstage.plot.labels import renderer_of

    renderer = renderer_of(ax.figure)
    angle = t.get_rotation()
    probe = ax.text(0, 0, t.get_text(), transform=None, fontsize=t.get_fontsize(), fontstyle=t.get_fontstyle())
    bb = probe.get_window_extent(renderer)
    probe.remove()
    w, h = bb.width, bb.height
    cx, cy = ax.transData.transform(t.get_position())
    rect = MplPath([(-w / 2, -h / 2), (w / 2, -h / 2), (w / 2, h / 2), (-w / 2, h / 2), (-w / 2, -h / 2)])
    return rect.transformed(Affine2D().rotate_deg(angle).translate(cx, cy)), (cx, cy, w, h, angle)


def _collisions(ax):
    """For every name on the figure: the other lines crossing it and the points under it."""
    names = [t for t in ax.texts if (t.get_gid() or "").split(":")[0] in NAME_KINDS]
    lines = [ln for ln in ax.lines if (ln.get_gid() or "").split(":")[0] in ("curve", "radius")]
    pts = np.vstack([ax.transData.transform(c.get_offsets()) for c in ax.collections
                     if isinstance(c, PathCollection) and (c.get_gid() or "").startswith("stars")])
    out = {}
    for t in names:
        own = "curve:" + t.get_gid().split(":", 1)[1] if t.get_gid().startswith("curve_label") else (
            "radius:" + t.get_gid().split(":", 1)[1] if t.get_gid().startswith("radius_label") else None)
        rect, (cx, cy, w, h, angle) = _text_rectangle(ax, t)
        to_local = Affine2D().translate(-cx, -cy).rotate_deg(-angle)
        box = Bbox([[-w / 2, -h / 2], [w / 2, h / 2]])
        crossing = []
        for ln in lines:
            if ln.get_gid() == own:
                continue
            xy = ax.transData.transform(np.column_stack([ln.get_xdata(), ln.get_ydata()]))
            xy = xy[np.all(np.isfinite(xy), axis=1)]
            if len(xy) > 1 and MplPath(to_local.transform(xy)).intersects_bbox(box, filled=False):
                crossing.append(ln.get_gid())
        local = to_local.transform(pts)
        under = int((np.all(np.abs(local) < (w / 2, h / 2), axis=1)).sum())
        out[t.get_gid()] = (crossing, under)
    return out


def test_demo_names_cover_no_data_and_no_other_line(demo_ax):
    # the demo figure of the issue: "Bright giant", "BGB", "Hot subdwarf" sat on data, ZAMS ran
    # through "10 R_sun", a dashed line through "Main sequence"
    found = _collisions(demo_ax)
    assert len(found) >= 8  # most curves, radius lines and regions are still named
    bad = {gid: v for gid, v in found.items() if v[0] or v[1]}
    assert not bad, bad


def test_synthetic_names_cover_no_data_and_no_other_line(tagged, real_stage_map):
    ax = hr_diagram(tagged, stage_map=real_stage_map, show_curves="all")
    ax.figure.draw_without_rendering()
    bad = {gid: v for gid, v in _collisions(ax).items() if v[0] or v[1]}
    assert not bad, bad


@pytest.mark.parametrize("curves", [True, "all"])
def test_every_drawn_curve_is_named_or_in_the_legend(tagged, real_stage_map, curves):
    ax = hr_diagram(tagged, stage_map=real_stage_map, show_curves=curves)
    ax.figure.draw_without_rendering()
    legend_texts = {t.get_text() for leg in ax.figure.legends for t in leg.get_texts()}
    for ln in ax.lines:
        gid = ln.get_gid() or ""
        kind, _, name = gid.partition(":")
        if kind not in ("curve", "radius"):
            continue
        on_figure = by_gid(ax, f"{kind}_label:{name}")
        in_legend = (CURVE_SHORT.get(name, ln.get_label()) if kind == "curve" else ln.get_label()) in legend_texts
        assert on_figure or in_legend, gid


def test_legend_counts_agree_with_the_catalogue(demo_tagged, demo_ax):
    legend_texts = [t.get_text() for leg in demo_ax.figure.legends for t in leg.get_texts()]
    stage = np.asarray(demo_tagged["stage"]).astype(str)
    for name in STAGES:
        n = int((stage == name).sum())
        entries = [t for t in legend_texts if t.startswith(LABELS[name] + " (")]
        if n == 0:
            assert not entries
            continue
        assert len(entries) == 1, name
        assert entries[0].startswith(f"{LABELS[name]} ({n}")  # every row of the stage, drawn or not
    # the demo has unclassified rows without a position: the entry says they are not drawn
    no_pos = ~(np.isfinite(np.asarray(demo_tagged["teff_used"], float))
               & np.isfinite(np.asarray(demo_tagged["logl_used"], float)))
    k = int(no_pos.sum())
    assert k > 0
    (unc,) = [t for t in legend_texts if t.startswith("Unclassified (")]
    n_unc = int((np.asarray(demo_tagged["stage"]).astype(str) == "unclassified").sum())
    assert unc == f"Unclassified ({n_unc}; {k} not drawn)"


def test_cool_but_massive_ring_only_where_it_contradicts_the_label(demo_tagged, demo_ax):
    flags = np.asarray(demo_tagged["flags"], dtype=np.int64)
    stage = np.asarray(demo_tagged["stage"]).astype(str)
    cbm = (flags & F.COOL_BUT_MASSIVE) != 0
    assert cbm.sum() > 300  # the 366 rings of the demo ...
    expected = cbm & np.isin(stage, CBM_MARKED_STAGES)
    expected &= np.isfinite(np.asarray(demo_tagged["teff_used"], float))
    (rings,) = by_gid(demo_ax, "flagged:cool_but_massive")
    assert len(rings.get_offsets()) == int(expected.sum()) < 50  # ... are a few now
    assert max(rings.get_linewidths()) <= 0.8  # thinner than the point edges of flagged squares
    teff = np.asarray(demo_tagged["teff_used"], float)[expected]
    np.testing.assert_allclose(np.sort(rings.get_offsets()[:, 0]), np.sort(np.log10(teff)))


def test_colour_by_a_numeric_column(demo_tagged):
    ax = hr_diagram(demo_tagged, color_by="feh_used")
    (cbar,) = by_gid(ax.figure, "hrstage:colour_bar")
    assert "feh_used" in cbar.get_ylabel()
    (ms,) = by_gid(ax, "stars:feh_used:main_sequence")
    feh = np.asarray(demo_tagged["feh_used"], float)
    stage = np.asarray(demo_tagged["stage"]).astype(str)
    ok = np.isfinite(np.asarray(demo_tagged["teff_used"], float)) & (stage == "main_sequence")
    np.testing.assert_allclose(np.ma.filled(ms.get_array(), np.nan), feh[ok], equal_nan=True)
    norm = ms.norm
    assert norm.vmin == pytest.approx(np.nanmin(feh)) and norm.vmax == pytest.approx(np.nanmax(feh))


def test_colour_by_errors_name_the_column(demo_tagged):
    with pytest.raises(HrstageInputError, match="'nosuch': no such column.*numeric columns: .*teff"):
        hr_diagram(demo_tagged, color_by="nosuch")
    with pytest.raises(HrstageInputError, match="column 'sptype' holds text, not numbers"):
        hr_diagram(demo_tagged, color_by="sptype")


def test_uncertainties_on_request(demo_tagged):
    assert not by_gid(hr_diagram(demo_tagged), "error_")
    assert by_gid(hr_diagram(demo_tagged, error_bars=True), "error_bars")
    assert by_gid(hr_diagram(demo_tagged, error_bars="ellipse"), "error_ellipses")


def _cli(*args, cwd):
    return subprocess.run([sys.executable, "-m", "hrstage.cli", *args], capture_output=True, text=True, cwd=cwd,
                          env={"MPLBACKEND": "Agg", "PATH": "/usr/bin:/bin"}, timeout=300)


def test_cli_plot_colour_by_column_and_errors(tmp_path, demo_tagged):
    src = tmp_path / "tagged.ecsv"
    demo_tagged.write(src)
    r = _cli("plot", str(src), "-o", "feh.png", "--color-by", "feh_used", "--errors", "ellipse", cwd=tmp_path)
    assert r.returncode == 0, r.stderr
    assert (tmp_path / "feh.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    r = _cli("plot", str(src), "-o", "bad.png", "--color-by", "nosuch", cwd=tmp_path)
    assert r.returncode == 2
    assert len(r.stderr.strip().splitlines()) == 1 and "nosuch" in r.stderr and "Traceback" not in r.stderr
    assert not (tmp_path / "bad.png").exists()
    r = _cli("plot", "--help", cwd=tmp_path)
    assert "numeric column" in r.stdout and "--errors" in r.stdout


def test_a_stage_added_later_gets_a_style_and_is_drawn(monkeypatch, real_stage_map):
    """New stages (pre-main sequence, giant branches) appear on the figures and in the report
    once they are in hrstage.stages, without a fixed list in the faces."""
    import hrstage.plot.hrd as hrd
    import hrstage.plot.palette as palette
    import hrstage.report.html as report

    stages = tuple(STAGES[:-1]) + ("new_branch", STAGES[-1])
    for mod in (palette, hrd, report):
        monkeypatch.setattr(mod, "STAGES", stages)
    pal = palette._build("test", palette._DEFAULT)
    assert pal["new_branch"].label == "New branch"
    assert pal["new_branch"].marker not in {pal[s].marker for s in STAGES}
    from astropy.table import Table

    st = np.array(["main_sequence", "new_branch", "giant"])

    t = Table({"teff_used": [5800.0, 4000.0, 4500.0], "logl_used": [0.0, 0.5, 1.8], "stage": st})
    monkeypatch.setattr(hrd, "get_palette", lambda p: pal)
    monkeypatch.setattr("hrstage.plot._data.STAGES", stages)
    ax = hr_diagram(t, stage_map=real_stage_map)
    assert by_gid(ax, "stars:new_branch")
    monkeypatch.setattr("hrstage.plot.palette.get_palette", lambda p: pal)
    doc = report.render_report(t, figure=False)
    assert "New branch" in doc and "<code>new_branch</code>" in doc


def test_kiel_names_cover_no_data_and_no_other_line(demo_tagged):
    from hrstage.plot import kiel_diagram

    ax = kiel_diagram(demo_tagged)
    ax.figure.draw_without_rendering()
    found = _collisions(ax)
    assert sum(k.startswith("region_label") for k in found) >= 5
    bad = {gid: v for gid, v in found.items() if v[0] or v[1]}
    assert not bad, bad
