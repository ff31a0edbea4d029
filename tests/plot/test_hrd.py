"""HR, Kiel and colour-magnitude diagrams: the Artist tree, formats and global state."""

import itertools

import matplotlib
import numpy as np
import pytest
from matplotlib.collections import LineCollection, PathCollection, PolyCollection
from matplotlib.lines import Line2D
from matplotlib.patches import Polygon

from hrstage import flags as F
from hrstage.errors import HrstageInputError
from hrstage.plot import PALETTES, blackbody_colour, colour_magnitude_diagram, hr_diagram, kiel_diagram, write_figure
from hrstage.plot.hrd import CBM_MARKED_STAGES, CURVE_SHORT, DEFAULT_CURVES, DEFAULT_RADII
from hrstage.stages import STAGES


def by_gid(ax, prefix, kind=None):
    out = [a for a in ax.findobj() if (a.get_gid() or "").startswith(prefix)]
    return [a for a in out if kind is None or isinstance(a, kind)]


@pytest.fixture(scope="module")
def hrd(tagged, real_stage_map):
    rows = np.arange(0, len(tagged), 6)
    ax = hr_diagram(tagged, stage_map=real_stage_map, label_column="name", label_rows=rows, error_bars=True)
    ax.figure.draw_without_rendering()
    return ax


def test_regions_drawn_from_the_stage_map(hrd, real_stage_map):
    for stage, polys in real_stage_map.regions.items():
        patches = by_gid(hrd, f"region:{stage}", Polygon)
        assert len(patches) == len(polys), stage
        np.testing.assert_allclose(patches[0].get_xy()[: len(polys[0])], polys[0])
        assert patches[0].get_alpha() < 0.3  # low fill opacity
    labels = {t.get_gid().split(":")[1]: t.get_text() for t in by_gid(hrd, "region_label:")}
    # a region is named where its name covers no point, line or other text (test_figure_reading.py)
    assert set(labels) <= set(real_stage_map.regions) and len(labels) >= 4
    assert all(text == PALETTES["default"][stage].label for stage, text in labels.items())


def test_named_curves_with_labels(hrd, real_stage_map):
    for name in DEFAULT_CURVES:
        (line,) = by_gid(hrd, f"curve:{name}", Line2D)
        assert line.get_label() == real_stage_map.curves[name].label
        np.testing.assert_allclose(line.get_xdata(), real_stage_map.curves[name].logt)
        texts = by_gid(hrd, f"curve_label:{name}")
        legend = [t.get_text() for leg in hrd.figure.legends for t in leg.get_texts()]
        # named on the curve where the name covers nothing else, otherwise in the legend
        assert [t.get_text() for t in texts] == [CURVE_SHORT[name]] or (not texts and CURVE_SHORT[name] in legend)


def test_radius_lines(hrd):
    for r in DEFAULT_RADII:
        (line,) = [a for a in by_gid(hrd, "radius:", Line2D) if a.get_gid() == f"radius:{r:g}"]
        x, y = line.get_xdata(), line.get_ydata()
        # Stefan-Boltzmann with Teff_sun = 5772 K (IAU 2015 B3): L = R^2 (Teff / 5772 K)^4
        np.testing.assert_allclose(y, 2 * np.log10(r) + 4 * (x - np.log10(5772.0)))
    labels = [t.get_text() for t in by_gid(hrd, "radius_label:")]
    assert any(lab.startswith("1 ") for lab in labels) and any(lab.startswith("100 ") for lab in labels)


def test_points_by_stage_with_palette(hrd, tagged):
    pal = PALETTES["default"]
    for stage in set(tagged["stage"]):
        (coll,) = by_gid(hrd, f"stars:{stage}", PathCollection)
        assert len(coll.get_offsets()) == int((tagged["stage"] == stage).sum())
        np.testing.assert_allclose(coll.get_facecolor()[0][:3], matplotlib.colors.to_rgb(pal.colour(stage)))


def test_secondary_axes(hrd):
    axes = hrd.child_axes
    top = [a for a in axes if a.get_gid() == "hrstage:sptype_axis"]
    right = [a for a in axes if a.get_gid() == "hrstage:mbol_axis"]
    assert len(top) == 1 and len(right) == 1
    labels = [t.get_text() for t in top[0].get_xticklabels()]
    assert {"B0", "A0", "G0", "M0"} <= set(labels)
    assert "M_" in right[0].get_ylabel() and "4.74" in right[0].get_ylabel()
    assert any(t.get_text() for t in right[0].get_yticklabels())


def test_error_bars_and_flag_marks(hrd, tagged):
    bars = by_gid(hrd, "error_bars", LineCollection)
    assert len(bars) == 2  # x and y
    fl = np.asarray(tagged["flags"])
    for group, bit in (("cool_but_massive", F.COOL_BUT_MASSIVE), ("sptype_conflict", F.SPTYPE_CONFLICT),
                       ("poor_distance", F.LOW_PARALLAX_SNR)):
        (coll,) = by_gid(hrd, f"flagged:{group}", PathCollection)
        want = (fl & bit) != 0
        if group == "cool_but_massive":  # only where the flag contradicts the label
            want &= np.isin(np.asarray(tagged["stage"]).astype(str), CBM_MARKED_STAGES)
        assert len(coll.get_offsets()) == int(want.sum())
        assert len(coll.get_facecolor()) == 0  # open symbols: the stage colour stays visible


def test_star_labels_do_not_overlap(hrd):
    renderer = hrd.figure.canvas.get_renderer()
    labels = by_gid(hrd, "star_label")
    assert len(labels) >= 15
    # the text boxes (an Annotation's own extent includes its leader line, which may cross
    # another label: a soft cost of the placement, not an overlap of labels)
    boxes = [matplotlib.text.Text.get_window_extent(t, renderer) for t in labels]
    axbox = hrd.get_window_extent(renderer)
    for a, b in itertools.combinations(boxes, 2):
        assert not a.overlaps(b)
    for b in boxes:
        assert axbox.x0 - 1 <= b.x0 and b.x1 <= axbox.x1 + 1 and axbox.y0 - 1 <= b.y0 and b.y1 <= axbox.y1 + 1


def test_caption_says_labels_are_indicative(hrd):
    (cap,) = by_gid(hrd, "caption")
    assert "indicative" in cap.get_text() and "[Fe/H] = +0.00" in cap.get_text()


def test_no_global_state_changed(tagged, real_stage_map):
    import matplotlib.pyplot as plt

    before = dict(matplotlib.rcParams)
    figs = plt.get_fignums()
    ax = hr_diagram(tagged, stage_map=real_stage_map, color_by="teff", palette="colourblind",
                    right_axis="mv", error_bars="ellipse", label_column="name", label_rows=[0, 1, 2])
    ax.figure.draw_without_rendering()
    assert dict(matplotlib.rcParams) == before
    assert plt.get_fignums() == figs  # no pyplot figure was opened


def test_colour_by_teff_uses_blackbody_colours(tagged, real_stage_map):
    ax = hr_diagram(tagged, stage_map=real_stage_map, color_by="teff", error_bars="ellipse")
    stage = "main_sequence"
    (coll,) = by_gid(ax, f"stars:teff:{stage}", PathCollection)
    m = np.asarray(tagged["stage"]) == stage
    np.testing.assert_allclose(coll.get_facecolor()[:, :3], blackbody_colour(np.asarray(tagged["teff_used"])[m]), atol=1e-6)
    (ell,) = by_gid(ax, "error_ellipses", PolyCollection)
    assert len(ell.get_paths()) == len(tagged)


def test_mv_axis_uses_flower_bc(tagged, real_stage_map):
    ax = hr_diagram(tagged, stage_map=real_stage_map, right_axis="mv", show_regions=False, show_curves=False)
    (sec,) = [a for a in ax.child_axes if a.get_gid() == "hrstage:mv_axis"]
    # Flower (1996) / Torres (2010): BC_V(5772 K) = -0.080 (formulae.md §4.1), M_bol,sun = 4.73:
    # a 1 L_sun star at that temperature has M_V = 4.73 + 0.08 = 4.81
    fwd = sec._functions[0]
    assert float(fwd(np.array([0.0]))[0]) == pytest.approx(4.81, abs=0.005)


def test_plain_arrays_and_missing_optional_columns(real_stage_map):
    ax = hr_diagram(teff=[5772.0, 4500.0, 20000.0], lum=[1.0, 80.0, 0.01], stage_map=real_stage_map)
    # no stage column: the stars are located in the same stage map
    names = {a.get_gid() for a in ax.collections if (a.get_gid() or "").startswith("stars:")}
    assert "stars:main_sequence" in names


def test_bad_input_messages(real_stage_map):
    with pytest.raises(HrstageInputError, match="temperature"):
        hr_diagram({"lum": [1.0]}, stage_map=real_stage_map)
    with pytest.raises(HrstageInputError, match="stage"):
        hr_diagram(teff=[5000.0], lum=[1.0], stage=["dwarfish"], stage_map=real_stage_map)
    with pytest.raises(HrstageInputError, match="palette"):
        hr_diagram(teff=[5000.0], lum=[1.0], palette="rainbow", stage_map=real_stage_map)
    with pytest.raises(HrstageInputError, match="show_curves"):
        hr_diagram(teff=[5000.0], lum=[1.0], show_curves=["nope"], stage_map=real_stage_map)


@pytest.mark.parametrize("suffix, magic", [(".png", b"\x89PNG\r\n\x1a\n"), (".pdf", b"%PDF-"), (".svg", b"<?xml")])
def test_figure_formats(tmp_path, hrd, suffix, magic):
    path = write_figure(hrd, tmp_path / f"hrd{suffix}")
    data = path.read_bytes()
    assert data.startswith(magic) and len(data) > 10_000
    if suffix == ".svg":
        assert b"<svg" in data[:2000]
    with pytest.raises(HrstageInputError, match="exists"):
        write_figure(hrd, path)
    write_figure(hrd.figure, path, overwrite=True)
    assert not list(tmp_path.glob("*.part"))


def test_figure_format_errors(tmp_path, hrd):
    with pytest.raises(HrstageInputError, match="format"):
        write_figure(hrd, tmp_path / "hrd.jpeg")
    with pytest.raises(HrstageInputError, match="directory"):
        write_figure(hrd, tmp_path / "missing" / "hrd.png")


def test_colourblind_palette_distinct():
    cb = PALETTES["colourblind"]
    colours = [cb.colour(s) for s in STAGES]
    markers = [cb.marker(s) for s in STAGES]
    assert len(set(colours)) == len(STAGES) and len(set(markers)) == len(STAGES)
    # built on Okabe & Ito (2008): their eight colours, plus grey for unclassified and Tol's (2021)
    # muted wine for the pre-main sequence
    okabe_ito = {"#000000", "#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00", "#CC79A7"}
    assert set(colours) - {"#999999", "#882255"} == okabe_ito
    # the same markers in both schemes, so the stage reads in greyscale
    assert markers == [PALETTES["default"].marker(s) for s in STAGES]


def test_kiel_diagram_moves_curves_through_the_mass(tagged, real_stage_map):
    t = tagged.copy()
    t["logg"] = 4.438 + 4 * (np.log10(t["teff_used"]) - np.log10(5772.0)) - t["logl_used"]
    ax = kiel_diagram(t, stage_map=real_stage_map, label_column="name", label_rows=[0, 20])
    assert ax.yaxis_inverted() and ax.xaxis_inverted()
    (zams,) = by_gid(ax, "curve:zams", Line2D)
    curve = real_stage_map.curves["zams"]
    g1 = np.interp(0.0, np.log10(curve.mass), zams.get_ydata())
    # Tout et al. 1996 ZAMS at 1 Msun, Z = 0.02: R = 0.8882 Rsun (formulae.md §1.4/§2.9), so
    # log g = 4.438 - 2 log10(0.8882) = 4.541
    assert g1 == pytest.approx(4.541, abs=0.01)
    (coll,) = by_gid(ax, "stars:giant", PathCollection)
    assert len(coll.get_offsets()) == int((t["stage"] == "giant").sum())


def test_colour_magnitude_diagram_from_parallax():
    data = {
        "bp_rp": np.array([0.82, 1.2, -0.1]),
        "phot_g_mean_mag": np.array([10.0, 8.0, 12.0]),
        "parallax": np.array([10.0, 1.0, -0.5]),
        "stage": np.array(["main_sequence", "giant", "white_dwarf"]),
        "name": np.array(["Synth-A", "Synth-B", "Synth-C"]),
    }
    from hrstage.errors import HrstageWarning

    with pytest.warns(HrstageWarning, match="1 of 3 star labels"):  # the star with no magnitude
        ax = colour_magnitude_diagram(data, label_column="name")
    assert ax.yaxis_inverted()
    (ms,) = by_gid(ax, "stars:main_sequence", PathCollection)
    # distance modulus (common practice): M = m + 5 log10(parallax / mas) - 10; G = 10 at 100 pc -> M_G = 5
    np.testing.assert_allclose(ms.get_offsets()[0], [0.82, 5.0])
    assert not by_gid(ax, "stars:white_dwarf")  # negative parallax: not shown ...
    (cap,) = by_gid(ax, "caption")
    assert "1 star without a position" in cap.get_text() and "extinction" in cap.get_text()  # ... but counted


def test_columns_with_units_from_a_written_catalogue(real_stage_map):
    """A tagged table read back from disk carries ``logl_used`` in dex(solLum) (hrstage.columns);
    a user table may carry a linear luminosity in W or solLum. All three must plot at the same
    place: 1 Lsun = 3.828e26 W (IAU 2015 B3 nominal, astropy)."""
    import astropy.units as u
    from astropy.table import Column, Table

    teff = np.array([5772.0, 4800.0])
    logl = np.array([0.0, 1.7])
    tables = [
        Table({"teff_used": teff, "logl_used": Column(logl, unit="dex(solLum)")}),
        Table({"teff": teff, "lum": 10**logl * u.L_sun}),
        Table({"teff": teff, "lum": 10**logl * 3.828e26 * u.W}),
    ]
    for table in tables:
        ax = hr_diagram(table, stage_map=real_stage_map, show_regions=False, top_axis=None, right_axis=None)
        pts = np.vstack([c.get_offsets() for c in ax.collections if str(c.get_gid()).startswith("stars:")])
        np.testing.assert_allclose(sorted(pts[:, 1]), sorted(logl), atol=1e-9)
