"""The HTML report: contents, escaping, self-containment, and a headless-Chromium check."""

import datetime as dt
import re
import shutil
import subprocess
from html.parser import HTMLParser

import numpy as np
import pytest
from astropy.table import Table

from hrstage import flags as F
from hrstage.errors import HrstageInputError
from hrstage.report import INFORMATIONAL_BITS, render_report, write_report

EVIL = "<script>alert(1)</script>"
WHEN = dt.datetime(2030, 1, 2, 3, 4, 5, tzinfo=dt.timezone.utc)

# invented scenario: a survey of 40 synthetic stars with known stage counts
COUNTS = {"main_sequence": 20, "subgiant": 6, "giant": 8, "supergiant": 2, "white_dwarf": 3, "unclassified": 1}


def synthetic_table():
    stage = np.concatenate([[s] * k for s, k in COUNTS.items()])
    n = stage.size
    flags = np.full(n, F.NO_METALLICITY, dtype=np.int64)
    flags[[1, 4, 9]] |= F.LOW_PARALLAX_SNR
    flags[[2, 30]] |= F.COOL_BUT_MASSIVE
    flags[[5]] |= F.OUTSIDE_VALIDITY
    flags[[7, 8]] |= F.BC_FALLBACK
    names = [f"Synth-{i:02d}" for i in range(n)]
    names[4] = EVIL
    verdict = np.array(["consistent"] * n, dtype=object)
    verdict[[3, 4, 25]] = "lumclass_conflict"
    verdict[[6]] = "tclass_conflict"
    verdict[[10, 11]] = "not_checkable:no_type"
    flags[[3, 4, 25, 6]] |= F.SPTYPE_CONFLICT
    return Table(
        {
            "name": names,
            "teff_used": np.linspace(3500.0, 20000.0, n),
            "logl_used": np.linspace(-2.0, 4.0, n),
            "stage": stage,
            "stage_prob": np.full(n, 0.9),
            "flags": flags,
            "flag_text": [F.describe(f) for f in flags],
            "sptype": ["K0 III"] * n,
            "sptype_verdict": verdict.astype(str),
            "sptype_suggested": ["V"] * n,
            "sptype_nsigma": np.full(n, 3.5),
            f"odd {EVIL} column": np.zeros(n),
        }
    )


class _Tables(HTMLParser):
    """Collects the rows of each <table id=...> and the page's text and tag names."""

    def __init__(self):
        super().__init__()
        self.tables, self.tags, self.text = {}, [], []
        self._table = None
        self._section = None
        self._row = None
        self._cell = None

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        a = dict(attrs)
        if tag == "table":
            self._table = a.get("id")
            self.tables[self._table] = {"tbody": [], "tfoot": []}
        elif tag in ("tbody", "tfoot", "thead"):
            self._section = tag
        elif tag == "tr":
            self._row = []
        elif tag == "td":
            self._cell = []

    def handle_endtag(self, tag):
        if tag == "td" and self._cell is not None:
            self._row.append("".join(self._cell).strip())
            self._cell = None
        elif tag == "tr" and self._row is not None:
            if self._section in ("tbody", "tfoot") and self._table:
                self.tables[self._table][self._section].append(self._row)
            self._row = None

    def handle_data(self, data):
        self.text.append(data)
        if self._cell is not None:
            self._cell.append(data)


def parse(doc):
    p = _Tables()
    p.feed(doc)
    return p


@pytest.fixture(scope="module")
def doc():
    return render_report(synthetic_table(), figure=False, generated_at=WHEN,
                         settings={"feh": "column [Fe/H]", "n_draws": 128, EVIL: EVIL})


def test_stage_counts(doc):
    rows = parse(doc).tables["stage-counts"]["tbody"]
    got = {r[1]: int(r[2]) for r in rows}
    assert got == COUNTS
    share = {r[1]: r[3] for r in rows}
    assert share["main_sequence"] == "50.0 %" and share["white_dwarf"] == "7.5 %"  # 20/40, 3/40
    assert parse(doc).tables["stage-counts"]["tfoot"][0][2] == "40"


def test_catalogue_text_is_escaped(doc):
    assert EVIL not in doc
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in doc
    p = parse(doc)
    assert "script" not in p.tags  # no script element at all
    assert EVIL in "".join(p.text)  # ... but the name is there, as text (star name, column name, setting)
    assert doc.count("&lt;script&gt;alert(1)&lt;/script&gt;") >= 4


def test_self_contained(doc):
    assert not re.search(r"""(src|href)\s*=\s*["']?\s*(https?:|//)""", doc, re.I)
    assert "@import" not in doc and "url(" not in doc


FLAG_GROUP_TABLES = ("flagged-mk", "flagged-cool-massive", "flagged-low-probability", "flagged-other")


def _flagged_rows(p):
    return {key: [int(r[0]) for r in p.tables[key]["tbody"]] for key in FLAG_GROUP_TABLES if key in p.tables}


def test_flagged_stars_grouped_by_severity(doc):
    t = synthetic_table()
    p = parse(doc)
    fl = np.asarray(t["flags"])
    notable = set(np.flatnonzero((fl & ~INFORMATIONAL_BITS) != 0))
    groups = _flagged_rows(p)
    listed = [i for rows in groups.values() for i in rows]
    assert sorted(listed) == sorted(notable)  # every flagged star once
    assert groups["flagged-mk"] == [3, 4, 6, 25]  # equal n sigma: row order
    # cool but massive on a main-sequence label (row 2); row 30 is a white dwarf: "other"
    assert groups["flagged-cool-massive"] == [2]
    assert 30 in groups["flagged-other"]
    assert any("LOW_PARALLAX_SNR" in r[4] for r in p.tables["flagged-other"]["tbody"])
    headings = re.findall(r'<h3 id="group-([a-z-]+)">', doc)
    assert headings == ["mk", "cool-massive", "other"]  # most serious first, empty groups left out


def test_mk_conflicts_in_words_with_implied_and_measured_values(doc):
    p = parse(doc)
    conflicts = p.tables["sptype-conflicts"]["tbody"]
    assert [int(r[0]) for r in conflicts] == [3, 4, 6, 25]
    assert conflicts[1][1] == EVIL
    assert conflicts[0][3] == "Luminosity class disagrees with the HR position"  # in words, not a code
    assert "_" not in "".join(r[3] for r in conflicts)
    assert conflicts[0][4] == "V"  # differs from the catalogued III: shown
    why = conflicts[0][7]
    t = synthetic_table()
    assert "Catalogued K0 III implies Teff \u2248" in why and "(class III)" in why
    assert f"measured Teff {t['teff_used'][3]:.0f} K" in why and f"{t['logl_used'][3]:.2f}" in why
    verdicts = {r[0]: int(r[1]) for r in p.tables["sptype-verdicts"]["tbody"]}
    assert verdicts == {"Consistent with the HR position": 34, "Luminosity class disagrees with the HR position": 3,
                        "Not checkable": 2, "Temperature type disagrees with the measured Teff": 1}


def test_mk_implied_values_match_the_published_calibration(calibration_dir):
    """The Teff and L a catalogued K0 III implies, as the report prints them, against the class-III
    calibration of Straizys & Kuriliene (1981, Ap&SS 80, 353; spt_calib_III.csv of the shared data)."""
    from astropy.table import Table as T

    cal = T.read(calibration_dir / "spt_calib_III.csv", format="ascii.csv")
    row = cal[(cal["spt"] == "K0III") & np.array(["Straizys" in s for s in cal["source"]])][0]
    p = parse(render_report(synthetic_table(), figure=False, generated_at=WHEN))
    why = p.tables["sptype-conflicts"]["tbody"][0][7]
    m = re.search(r"implies Teff \u2248 (\d+) K, log L/L\u2609 \u2248 (-?[\d.]+)", why)
    assert m, why
    assert float(m.group(1)) == pytest.approx(float(row["teff_K"]), rel=0.03)
    assert float(m.group(2)) == pytest.approx(float(row["logL"]), abs=0.15)


def test_no_suggestion_when_it_is_the_catalogued_class():
    t = synthetic_table()
    t["sptype"] = ["G9IIIb"] * len(t)
    t["sptype_suggested"] = ["III"] * len(t)  # the class the type already has
    p = parse(render_report(t, figure=False, generated_at=WHEN))
    rows = p.tables["sptype-conflicts"]["tbody"]
    assert rows and all(r[4] == "" for r in rows)
    assert not any("fits class" in r[7] for r in rows)


def test_cautions(doc):
    text = " ".join(parse(doc).text)
    assert "do not replace a spectroscopic analysis" in text
    assert "3 stars with a parallax signal-to-noise below" in text
    assert "1 star outside the validity range" in text
    assert "2 stars with a fallback bolometric correction" in text
    # only what applies: no zero counts, no line about parallaxes that are all fine
    assert not re.search(r"\b0 stars?\b", text)
    assert "NONPOSITIVE_PARALLAX" not in text and "COLOUR_OUT_OF_RANGE" not in text


def test_no_median_probability_for_unclassified(doc):
    rows = {r[1]: r for r in parse(doc).tables["stage-counts"]["tbody"]}
    assert rows["unclassified"][4] == "" and rows["giant"][4] == "0.90"


def test_stage_map_tolerances_in_settings(doc):
    from dataclasses import asdict

    from hrstage.stagemap import StageParams

    rows = {r[0]: r[1] for r in parse(doc).tables["stage-params"]["tbody"]}
    assert set(rows) == set(asdict(StageParams()))
    assert rows["binary_offset"] == "0.3"  # log 2 = 0.30 dex: an equal-mass pair (common practice)


def test_settings_and_versions(doc):
    p = parse(doc)
    versions = {r[0] for r in p.tables["versions"]["tbody"]}
    assert {"hrstage", "python", "numpy", "astropy", "matplotlib"} <= versions
    settings = {r[0]: r[1] for r in p.tables["settings-table"]["tbody"]}
    assert settings["n_draws"] == "128"
    assert "2030-01-02 03:04:05" in doc


def test_row_cap_and_pointer_to_the_catalogue(tmp_path):
    t = synthetic_table()
    cat = tmp_path / "tagged.ecsv"
    t.write(cat)
    path = write_report(t, tmp_path / "r.html", figure=False, max_rows=2, generated_at=WHEN, catalogue=cat)
    doc = path.read_text(encoding="utf-8")
    p = parse(doc)
    groups = _flagged_rows(p)
    assert all(len(v) <= 2 for v in groups.values())
    assert len(p.tables["sptype-conflicts"]["tbody"]) == 2
    n_other = int((((np.asarray(t["flags"]) & ~INFORMATIONAL_BITS) != 0)).sum()) - 4 - 1
    assert f"{n_other - 2} more stars of this group not shown" in doc
    assert "2 more spectral-type conflicts not shown" in doc
    assert '<a href="tagged.ecsv">' in doc  # relative link to the written catalogue


def test_missing_optional_columns():
    t = Table({"teff": [5000.0, 6000.0], "lum": [1.0, 2.0], "stage": ["main_sequence", "giant"]})
    doc = render_report(t, figure=False)
    assert "No flagged stars" in doc and 'id="sptype"' not in doc
    with pytest.raises(HrstageInputError, match="stage"):
        render_report(Table({"teff": [5000.0]}), figure=False)


def test_write_report(tmp_path):
    path = write_report(synthetic_table(), tmp_path / "r.html", figure=False)
    assert path.read_text(encoding="utf-8").startswith("<!DOCTYPE html>")
    with pytest.raises(HrstageInputError, match="exists"):
        write_report(synthetic_table(), path, figure=False)
    write_report(synthetic_table(), path, figure=False, overwrite=True)
    with pytest.raises(HrstageInputError, match="html"):
        write_report(synthetic_table(), tmp_path / "r.txt", figure=False)
    assert not list(tmp_path.glob("*.part"))


@pytest.fixture(scope="module")
def report_with_figure(tmp_path_factory):
    stagemap = pytest.importorskip("hrstage.stagemap")
    path = tmp_path_factory.mktemp("report") / "report.html"
    write_report(synthetic_table(), path, stage_map=stagemap.stage_map(feh=0.0), generated_at=WHEN)
    return path


def test_figure_embedded(report_with_figure):
    doc = report_with_figure.read_text(encoding="utf-8")
    assert re.search(r"figure img,figure svg\{width:100%", doc)  # the figure at the page's full width
    m = re.search(r'<img id="hr-diagram" src="data:image/png;base64,([A-Za-z0-9+/=]+)"', doc)
    assert m
    import base64

    assert base64.b64decode(m.group(1)).startswith(b"\x89PNG")


def _chromium(args, tmp_path, timeout=90):
    exe = shutil.which("chromium") or shutil.which("chromium-browser")
    if exe is None:
        pytest.skip("chromium is not on PATH (Debian package 'chromium'; .ci/run installs it)")
    cmd = [exe, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
           "--disable-background-networking", "--disable-component-update", "--disable-sync",
           f"--user-data-dir={tmp_path / 'profile'}", *args]
    return subprocess.run(cmd, capture_output=True, timeout=timeout, check=False)


def test_chromium_screenshot_and_dom(report_with_figure, tmp_path):
    shot = tmp_path / "shot.png"
    run = _chromium([f"--screenshot={shot}", "--window-size=1200,2000", report_with_figure.as_uri()], tmp_path)
    assert shot.is_file() and shot.stat().st_size > 10_000, run.stderr.decode(errors="replace")[-2000:]
    import matplotlib.image as mpimg

    img = mpimg.imread(shot)
    assert img.shape[0] == 2000 and img.shape[1] == 1200
    assert float(img[..., :3].std()) > 0.05  # not a blank page

    dom = _chromium(["--dump-dom", report_with_figure.as_uri()], tmp_path).stdout.decode("utf-8")
    p = parse(dom)
    t = synthetic_table()
    n_flagged = int(((np.asarray(t["flags"]) & ~INFORMATIONAL_BITS) != 0).sum())
    assert len(p.tables["stage-counts"]["tbody"]) == len(COUNTS)
    assert sum(len(p.tables[k]["tbody"]) for k in FLAG_GROUP_TABLES if k in p.tables) == n_flagged
    assert len(p.tables["sptype-conflicts"]["tbody"]) == 4
    assert "script" not in p.tags  # the browser built no script element
    assert EVIL in "".join(p.text)  # the name is rendered as text


def test_id_and_type_columns_from_the_pipeline_mapping():
    """The pipeline records its column roles in the table meta ('hrstage_roles'); the report uses
    them, so an id column with an unusual name still labels the rows."""
    t = synthetic_table()
    t.rename_column("name", "target_code")
    t.rename_column("sptype", "mk_class_text")
    t.meta["hrstage_roles"] = "teff=teff,lum=lum,id=target_code,sptype=mk_class_text"
    p = parse(render_report(t, figure=False, generated_at=WHEN))
    flagged_ids = [row[1] for k in FLAG_GROUP_TABLES if k in p.tables for row in p.tables[k]["tbody"]]
    assert "Synth-01" in flagged_ids
    conflict_rows = p.tables["sptype-conflicts"]["tbody"]
    assert any("K0 III" in cell for row in conflict_rows for cell in row)


def test_every_conflict_verdict_is_listed():
    """All conflict verdicts of the MK check (luminosity class, temperature class, both, and the
    stage conflict of white dwarfs / subdwarfs / WR stars) appear in the conflicts table, with the
    check's reason text."""
    t = synthetic_table()
    verdict = np.array(t["sptype_verdict"], dtype=object)
    verdict[12] = "stage_conflict"
    verdict[13] = "tclass_and_lumclass_conflict"
    t["sptype_verdict"] = verdict.astype(str)
    t["sptype_reason"] = ["typed DA but the HR position is main_sequence" if i == 12 else "" for i in range(len(t))]
    p = parse(render_report(t, figure=False, generated_at=WHEN))
    rows = p.tables["sptype-conflicts"]["tbody"]
    listed = {row[0] for row in rows}
    assert {"3", "4", "25", "6", "12", "13"} <= listed
    assert any("typed DA but the HR position is main_sequence" in cell for row in rows for cell in row)


def test_cautions_count_shared_positions():
    # the two positions the HR diagram cannot settle get a caution with their counts (invented stars)
    t = synthetic_table()
    flags = np.array(t["flags"])
    flags[[12, 13]] |= F.HB_OR_MAIN_SEQUENCE
    flags[[14]] |= F.YOUNG_OR_EVOLVED
    t["flags"] = flags
    text = " ".join(parse(render_report(t, generated_at=WHEN)).text)
    assert "Blue horizontal branch or main sequence: 2 stars lie where" in text and "log g would separate them" in text
    assert "Young or evolved: 1 star lies where" in text
    assert "HB_OR_MAIN_SEQUENCE" in text
