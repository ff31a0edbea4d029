"""The giant branches on the faces: figure, report, explain, boundaries table, Dask schema."""

import numpy as np
import pytest
from astropy.table import Table

import hrstage
from hrstage.branches import BRANCHES
from hrstage.classifier import explain_star
from hrstage.classifier._branch import branch_curves
from hrstage.plot import branch_diagram
from hrstage.report import render_report


@pytest.fixture(scope="module")
def giants():
    # invented field: a first-ascent sequence, a clump and bright AGB stars at solar [Fe/H]
    rng = np.random.default_rng(14)
    teff = np.r_[rng.uniform(4500, 4900, 40), rng.normal(4700, 40, 30), rng.uniform(3500, 3800, 10), [5772.0]]
    lum = np.r_[10 ** rng.uniform(0.9, 1.4, 40), 10 ** rng.normal(1.78, 0.03, 30), 10 ** rng.uniform(3.5, 3.8, 10), [1.0]]
    return hrstage.classify(Table({"teff": teff, "lum": lum, "feh": np.zeros(teff.size)}))


def test_branch_column(giants):
    br = np.asarray(giants["branch"]).astype(str)
    assert set(br) <= set(BRANCHES)
    assert br[-1] == "not_giant"
    assert np.mean(br[40:70] == "red_clump") > 0.8
    assert np.mean(br[:40] == "red_giant_branch") > 0.8
    # above every RGB tip (log L 3.44): AGB where the stage map calls them giant-class (the others,
    # in the supergiant region, get no branch)
    st = np.asarray(giants["stage"]).astype(str)[70:80]
    g = np.isin(st, ("giant", "bright_giant"))
    assert g.sum() >= 5
    assert np.all(np.isin(br[70:80][g], ("early_agb", "thermally_pulsing_agb")))
    assert np.all(br[70:80][~g] == "not_giant")


@pytest.mark.parametrize("kiel", [False, True])
def test_branch_diagram(giants, kiel):
    ax = branch_diagram(giants, kiel=kiel)
    gids = {a.get_gid() for a in ax.get_children() if a.get_gid()}
    assert "branch-core-he" in gids and "branch-points-red_clump" in gids
    assert any(g.startswith("branch-rgb-") for g in gids)
    assert "not_giant" not in " ".join(t.get_text() for t in ax.get_legend().get_texts())


def test_report_counts_branches(giants):
    doc = render_report(giants, figure=False)
    assert 'id="branch-counts"' in doc
    k = int((np.asarray(giants["branch"]).astype(str) == "red_clump").sum())
    assert f"<code>red_clump</code></td><td class=\"num\">{k}<" in doc.replace("\n", "") or f">{k}<" in doc


def test_explain_names_the_branch():
    text = explain_star(4700.0, 60.0, feh=0.0)
    assert "Branch: red_clump" in text


def test_boundaries_have_branch_curves():
    c = branch_curves(0.0)
    assert set(c) == {"branch_rgb_oldest", "branch_rgb_2msun", "branch_core_he_lower", "branch_core_he_upper",
                      "branch_rgb_tip"}
    # the band's lower edge lies below its upper edge, mass by mass
    lo, hi = c["branch_core_he_lower"], c["branch_core_he_upper"]
    assert np.all(lo[3] < hi[3]) and np.array_equal(lo[1], hi[1])


def test_dask_schema_has_branch():
    pytest.importorskip("dask")
    from hrstage.distributed import output_meta

    import pandas as pd

    meta = output_meta(pd.DataFrame({"teff": pd.Series([], dtype=float), "lum": pd.Series([], dtype=float)}))
    cols = list(meta.columns)
    assert "branch" in cols and "prob_core_he" in cols
