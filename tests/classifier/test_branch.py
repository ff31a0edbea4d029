"""Giant-branch labels, probabilities and branch-aware masses (hrstage.classifier._branch)."""

import numpy as np
import pytest

from hrstage.branches import BRANCHES
from hrstage.classifier import classify_hr
from hrstage.classifier._branch import branch_grids, classify_branch, gravity_mass
from hrstage.columns import CLASSIFY_COLUMNS
from hrstage.models.stellar import LOGG_SUN


def test_sun_gravity_mass():
    # IAU 2015 B3 nominal Sun: log g = LOGG_SUN, L = 1, Teff = 5772 K -> 1 Msun
    m, e = gravity_mass(np.log10(5772.0), 0.0, LOGG_SUN, 0.0, 0.0, 0.01)
    assert m == pytest.approx(1.0, rel=1e-9)
    # 0.01 dex in log g -> ln(10) * 0.01 = 2.3 % in mass
    assert e == pytest.approx(np.log(10) * 0.01, rel=1e-6)


def test_labels_on_the_solar_giant_region():
    # clump: HPT2000 ZAHB at solar Z is log L 1.76-1.81, ~4600-4700 K (1-1.5 Msun); the first-ascent
    # giant branch at log L 1.0 and 4800 K has no core-He burner (below the ZAHB band)
    lt = np.log10([4650.0, 4800.0, 5772.0, 3600.0])
    ll = [1.78, 1.0, 0.0, 3.6]
    r = classify_hr(lt, ll, feh=0.0, logt_err=0.005, logl_err=0.03)
    br = r.branch.branch.tolist()
    assert br[0] == "red_clump" and br[1] == "red_giant_branch" and br[2] == "not_giant"
    assert br[3] in ("early_agb", "thermally_pulsing_agb")   # brighter than every RGB tip (3.44)
    p = r.branch.proba
    assert np.allclose(p[[0, 1, 3]].sum(axis=1), 1.0)
    assert np.isnan(p[2]).all()
    assert r.mass_method.tolist()[:2] == ["core_he_burning", "red_giant_branch"]


def test_unresolved_when_hypotheses_split():
    # raising the bar above every probability leaves the giants unresolved, never relabelled
    lt, ll = np.log10([4650.0, 4800.0]), [1.78, 1.0]
    b = classify_branch(lt, ll, [2, 2], feh=0.0, min_prob=1.01)
    assert b.branch.tolist() == ["unresolved", "unresolved"]
    assert np.isfinite(b.proba).all()


def test_rows_are_independent():
    rng = np.random.default_rng(3)
    lt = np.log10(rng.uniform(4000, 5200, 200))
    ll = rng.uniform(0.8, 3.0, 200)
    feh = rng.uniform(-1.5, 0.3, 200)
    full = classify_hr(lt, ll, feh=feh).branch
    part = classify_hr(lt[50:60], ll[50:60], feh=feh[50:60]).branch
    assert (full.code[50:60] == part.code).all()
    np.testing.assert_allclose(full.proba[50:60], part.proba, rtol=1e-12)


def _evidence_by_hand(g, x, lt, sx, st):
    """Evidence per hypothesis of one star straight from the tabulated loci (HR route), no blocks."""
    from hrstage.classifier import _branch

    pos = (x - _branch._XL[0]) / (_branch._XL[1] - _branch._XL[0])
    i = int(pos)
    f = pos - i
    out = []
    for h in range(3):
        t0, t1 = g.logt["hr"][h][:, i], g.logt["hr"][h][:, i + 1]
        tt = np.where(np.isfinite(t0), np.where(np.isfinite(t1), t0 * (1 - f) + t1 * f, t0), t1)
        w = g.weight["hr"][h][:, i] * (1 - f) + g.weight["hr"][h][:, i + 1] * f
        var = max(st, _branch.SIGMA_T_FLOOR) ** 2 + _branch.SIGMA_INT**2 + (
            g.slope["hr"][h][:, i] ** 2 * (sx**2 + _branch.SIGMA_X_INT**2))
        like = w * np.exp(-0.5 * (lt - tt) ** 2 / var) / np.sqrt(var)
        out.append(np.nansum(np.where(w > 0, like, 0.0)))
    return np.array(out)


def test_blocks_match_the_formula():
    # Many stars in one grid cell (scored together, the cell's loci broadcast) and a sparse spread
    # (blocks over several cells): each star's evidence equals the Gaussian sum written out by hand
    from hrstage.classifier import _branch

    rng = np.random.default_rng(5)
    g = branch_grids(0.0)
    crowd = rng.uniform(1.501, 1.519, 1500)
    spread = rng.uniform(0.6, 3.3, 300)
    x = np.r_[crowd, spread]
    lt = np.log10(rng.uniform(3900, 5200, x.size))
    sx, st = rng.uniform(0, 0.05, x.size), rng.uniform(0, 0.01, x.size)
    ev = _branch._evaluate(g, "hr", x, lt, sx, st)[0]
    for j in list(range(0, 1500, 150)) + list(range(1500, 1800, 30)):
        np.testing.assert_allclose(ev[j], _evidence_by_hand(g, x[j], lt[j], sx[j], st[j]), rtol=1e-9)


def test_columns_and_names():
    r = classify_hr(np.log10([4650.0]), [1.78], feh=0.0)
    cols = r.to_columns()
    for c in ("branch", "branch_prob", "prob_rgb", "prob_core_he", "prob_agb"):
        assert c in CLASSIFY_COLUMNS and c in cols
    assert cols["branch"][0] in BRANCHES
    coded = r.to_columns(coded=True)["branch"]
    assert coded.texts[coded.codes[0]] == cols["branch"][0]
    off = classify_hr(np.log10([4650.0]), [1.78], feh=0.0, branches=False)
    assert off.branch is None and "branch" not in off.to_columns()


def test_grid_is_physical():
    g = branch_grids(0.0)
    # the age-limit mass (13.8 Gyr to the base of the giant branch) is ~0.9-1.0 Msun at solar Z
    assert 0.85 < g.m_age < 1.05
    # RGB tips (HPT2000 eq 49) of low-mass stars at log L ~3.4
    tips = g.logl_tip[(g.mass > 1.0) & (g.mass < 1.5)]
    assert np.all((tips > 3.3) & (tips < 3.5))


def test_post_agb_needs_mass_heat_and_luminosity():
    # a 0.6 Msun star (a bare CO core, the usual post-AGB mass: common practice) at log L 3.6,
    # above every HPT2000 RGB tip (log L 3.44 at solar Z), at 6000 and 10000 K; the same position
    # with a 6 Msun gravity mass (an intermediate-mass star crossing); 0.6 Msun at 3800 K (on the
    # AGB); 0.6 Msun at 6000 K but log L 2.5 (below the tip: a post-RGB or HB star could be there)
    teff = np.array([6000.0, 10000.0, 6000.0, 3800.0, 6000.0])
    ll = np.array([3.6, 3.6, 3.6, 3.6, 2.5])
    mass = np.array([0.6, 0.6, 6.0, 0.6, 0.6])
    lt = np.log10(teff)
    lg = LOGG_SUN + np.log10(mass) + 4 * (lt - np.log10(5772.0)) - ll   # g = G M / R^2
    r = classify_hr(lt, ll, logg=lg, feh=0.0, logt_err=0.01, logl_err=0.05, logg_err=0.2)
    br = r.branch.branch.tolist()
    assert br[:2] == ["post_agb", "post_agb"]
    assert br[2] != "post_agb" and br[3] != "post_agb" and br[4] != "post_agb"
    assert np.isnan(r.branch.branch_prob[0]) and np.isnan(r.branch.proba[0]).all()
    assert r.mass[0] == pytest.approx(0.6, rel=1e-6)      # gravity_radius mass kept
    from hrstage.classifier._branch import branch_text
    assert branch_text(r.branch, 0).startswith("Branch: post_agb")
    # a gravity mass too uncertain to be far below M_HeF (log g error 0.5 dex): no label
    r = classify_hr(lt[:1], ll[:1], logg=lg[:1], feh=0.0, logt_err=0.01, logl_err=0.05, logg_err=0.5)
    assert r.branch.branch[0] != "post_agb"
    # from the HR position alone the mass is unknown: never post_agb
    r = classify_hr(lt, ll, feh=0.0, logt_err=0.01, logl_err=0.05)
    assert "post_agb" not in r.branch.branch.tolist()


def test_no_branch_far_from_every_locus():
    # a yellow luminous star (6000-7000 K, log L 3.0-3.3, solar Z) sits in the Hertzsprung gap /
    # instability strip of intermediate-mass stars, tens of sigma hotter than every HPT2000 giant,
    # core-He and AGB locus at its L (measured 18-30 sigma): no branch is named (it used to be the
    # "least far" hypothesis, red_giant_branch), and explain says why
    from hrstage.classifier._branch import OFF_LOCUS_NSIGMA, branch_text

    lt, ll = np.log10([6000.0, 7000.0, 4650.0]), [3.0, 3.3, 1.78]
    r = classify_hr(lt, ll, feh=0.0)
    b = r.branch
    assert b.branch.tolist()[:2] == ["unresolved", "unresolved"]
    assert np.all(b.off_locus[:2] > OFF_LOCUS_NSIGMA) and b.off_locus[2] < 3
    assert b.branch[2] == "red_clump"
    assert "sigma in Teff from the nearest branch locus" in branch_text(b, 0)


def test_horizontal_branch_only_below_the_helium_flash_mass():
    # the label horizontal_branch is for core-He burners lighter than M_HeF (degenerate ignition,
    # HPT2000 eq 2); a heavier core-He burner hotter than the clump is on its blue loop
    from hrstage.branches import BLUE_LOOP, CORE_HE_BRANCHES, HORIZONTAL_BRANCH

    assert BRANCHES[BLUE_LOOP] == "blue_loop" and BLUE_LOOP in CORE_HE_BRANCHES
    # metal-poor HB star: 7000 K, log L 1.7 at [Fe/H] = -1.5 (common practice: the HB of old
    # metal-poor clusters lies at log L ~1.6-1.8)
    r = classify_hr(np.log10([7000.0]), [1.7], feh=-1.5)
    assert r.branch.code[0] == HORIZONTAL_BRANCH
    assert r.branch.mass_core_he[0] < branch_grids(-1.5).m_hef
