"""Stage map: geometry, raster accuracy, cache, export (checks against outside values named inline)."""

import numpy as np
import pytest
from matplotlib.path import Path

from hrstage.errors import HrstageInputError
from hrstage.stagemap import StageParams, stage_map
from hrstage.stagemap._raster import Grid, fill_polygon
from hrstage.stages import CODE, STAGES


@pytest.fixture(scope="module")
def sm():
    return stage_map(0.0)


def test_fill_polygon_matches_point_in_polygon():
    # reference: matplotlib Path.contains_points (a general-purpose library), random star polygons
    g = Grid(dt=0.01, dl=0.02)
    rng = np.random.default_rng(3)
    tx, ly = g.centres()
    X, Y = np.meshgrid(tx, ly)
    for _ in range(4):
        ang = np.sort(rng.uniform(0, 2 * np.pi, 25))
        r = rng.uniform(0.2, 0.9, 25)
        poly = np.c_[4.3 + r * np.cos(ang), 0.5 + 5 * r * np.sin(ang)]
        ref = Path(poly).contains_points(np.c_[X.ravel(), Y.ravel()]).reshape(X.shape)
        assert (fill_polygon(poly, g) != ref).sum() == 0


def test_critical_masses_and_thresholds(sm):
    # formulae.md §2.1 [C]: M_HeF = 1.995, M_FGB = 13.032 at Z = 0.02; §2.1/§6.3: M(Mc,BAGB=2.25) = 8.20
    assert sm.m_hef == pytest.approx(1.995, abs=1e-3)
    assert sm.m_fgb == pytest.approx(13.032, abs=2e-3)
    assert sm.m_sg == pytest.approx(8.20, abs=0.02)
    # 13.8 Gyr mass: HPT2000 t_MS(1 Msun) = 11.0 Gyr (formulae.md §2.9), so it lies just below 1 Msun
    assert 0.9 < sm.m_age < 1.0


def test_curves_follow_the_relations(sm):
    c = sm.curves
    # formulae.md §1.4 [C]: ZAMS Z=0.02, 1 Msun: L = 0.697717, Teff = 5597 K
    i = np.argmin(np.abs(c["zams"].mass - 1.0))
    assert c["zams"].mass[i] == pytest.approx(1.0, rel=2e-2)
    l1 = np.interp(0.0, np.log10(c["zams"].mass), c["zams"].logl)
    t1 = np.interp(0.0, np.log10(c["zams"].mass), c["zams"].logt)
    assert 10**l1 == pytest.approx(0.697717, rel=2e-3)
    assert 10**t1 == pytest.approx(5597, abs=5)
    # formulae.md §2.9 [C]: 2 Msun TAMS L = 37.57, Teff 7568; BGB 5 Msun L = 860.7, Teff 4562
    lt = np.interp(np.log10(2.0), np.log10(c["tams"].mass), c["tams"].logl)
    tt = np.interp(np.log10(2.0), np.log10(c["tams"].mass), c["tams"].logt)
    assert 10**lt == pytest.approx(37.57, rel=1e-2)
    assert 10**tt == pytest.approx(7568, rel=5e-3)
    lb = np.interp(np.log10(5.0), np.log10(c["bgb"].mass), c["bgb"].logl)
    tb = np.interp(np.log10(5.0), np.log10(c["bgb"].mass), c["bgb"].logt)
    assert 10**lb == pytest.approx(860.7, rel=1e-2)
    assert 10**tb == pytest.approx(4562, rel=5e-3)
    # geometry note formulae.md §2.9: L_BGB < L_TMS for M >~ 2 Msun (5 Msun: 1509 vs 861)
    assert lb < np.interp(np.log10(5.0), np.log10(c["tams"].mass), c["tams"].logl)
    # the He-ignition curve is broken (NaN) at the M_FGB jump (formulae.md §2.7)
    assert np.isnan(c["hei"].logt).sum() == 1
    for name in ("zams", "tams", "ms_upper", "bgb", "hei", "agb", "wd_min", "wd_max", "giant_tip"):
        assert name in c


def test_white_dwarf_band(sm):
    # formulae.md §2.8 [C]: a 0.6 Msun white dwarf has log L = -1.63 at 20 000 K, -3.22 at 8 000 K
    for teff, logl in ((20000, -1.63), (8000, -3.22)):
        assert STAGES[sm.locate(np.log10(teff), logl)] == "white_dwarf"
        assert sm.mass_at(np.log10(teff), logl) == pytest.approx(0.6, abs=0.03)


def test_locate_matches_regions(sm):
    # the outlines drawn are the raster classified: random points inside each outline get its code
    rng = np.random.default_rng(5)
    for name, polys in sm.regions.items():
        assert polys, name
        big = max(polys, key=len)
        lo, hi = big.min(axis=0), big.max(axis=0)
        pts = rng.uniform(lo, hi, size=(4000, 2))
        inside = Path(big).contains_points(pts)
        holes = sm.region_holes[name]
        for h in holes:
            inside &= ~Path(h).contains_points(pts)
        codes = sm.locate(pts[inside, 0], pts[inside, 1])
        # resolution of the traced outline (half the raster) leaves a thin disagreeing rim
        assert np.mean(codes == CODE[name]) > 0.97, name


def test_out_of_map_and_nan_are_unclassified(sm):
    codes = sm.locate([np.nan, 3.0, 6.0, 3.7], [0.0, 0.0, 0.0, np.inf])
    assert (codes == CODE["unclassified"]).all()


def test_cache_and_params():
    a = stage_map(0.0)
    assert stage_map(0.0004) is a  # rounded to 0.001 dex
    b = stage_map(0.0, binary_offset=0.2)
    assert b is not a and b.params.binary_offset == 0.2
    with pytest.raises(HrstageInputError, match="unknown stage parameter"):
        stage_map(0.0, not_a_param=1)
    with pytest.raises(HrstageInputError, match="ms_below_zams"):
        StageParams(ms_below_zams=-1)


def test_metallicity_clipped():
    sm = stage_map(-3.0)
    # Z = 0.02 x 10^-3 = 2e-5 < 1e-4: clipped to the fits' edge (formulae.md §1.3)
    assert sm.z_clipped and sm.z == pytest.approx(1e-4)
    # formulae.md §2.1 [C]: M_FGB falls with Z (10.34 at Z = 0.001)
    assert stage_map(np.log10(0.001 / 0.02)).m_fgb == pytest.approx(10.344, abs=0.01)


def test_to_table(sm):
    t = sm.to_table()
    assert set(t.colnames) == {"curve", "mass", "logt", "logl"}
    assert set(np.unique(t["curve"])) >= {"zams", "tams", "ms_upper", "bgb"}
    assert t.meta["z"] == pytest.approx(0.02)
    assert any("Tout" in c for c in t.meta["citations"])
    assert np.isfinite(t["logt"]).all()


def test_distance_to_boundaries(sm):
    # the Sun (common practice: 5772 K, 1 Lsun) lies above the ZAMS and below the MS upper edge
    d = sm.distance_to_boundaries(np.log10(5772.0), 0.0, names=["zams", "ms_upper"])
    assert 0 < d["zams"][0][0] < 0.2
    assert d["ms_upper"][0][0] < 0


def test_raster_accuracy_near_zams(sm):
    # cells of 0.001 dex x 0.0025 dex: a boundary is placed to half a cell, i.e. within
    # 0.00125 + |slope| x 0.0005 dex in log L; positions twice that far off the lower MS edge are
    # on the right side of it
    t = np.linspace(3.6, 4.4, 50)
    edge = sm.ms_lower_at(t)
    slope = np.abs(sm.ms_lower_at(t + 1e-3) - sm.ms_lower_at(t - 1e-3)) / 2e-3
    tol = 2 * (0.00125 + slope * 0.0005)
    assert (sm.locate(t, edge + tol) == CODE["main_sequence"]).all()
    assert (sm.locate(t, edge - tol) != CODE["main_sequence"]).all()


def test_core_helium_band_takes_the_gap_overlap():
    # metal-poor red horizontal branch: MIST v1.2 [Fe/H] = -1.35 12 Gyr phase 3 lies at
    # log Teff 3.74-3.76, log L 1.75 (Choi et al. 2016; Dotter 2016); HPT2000 eq 53 gives the ZAHB
    sm = stage_map(-1.35)
    on, off = sm, stage_map(-1.35, hb_height=0.0)
    t, l = np.array([3.745, 3.80, 3.90]), np.array([1.76, 1.85, 1.95])
    assert list(STAGES[c] for c in off.locate(t, l)) == ["subgiant"] * 3
    assert list(STAGES[c] for c in on.locate(t, l)) == ["giant"] * 3
    from hrstage.stagemap import RAW_HB
    assert np.all(on.locate_raw(t, l) & RAW_HB)
    # only Hertzsprung-gap cells change: every other label is the same with and without the band
    g = on.grid
    a, b = on.codes.values, off.codes.values
    changed = a != b
    assert changed.any()
    assert np.all(b[changed] == CODE["subgiant"]) and np.all(a[changed] == CODE["giant"])
    # the band is hotter than the coolest ZAHB point and cooler than hb_teff_max (20 kK)
    tc, _ = g.centres()
    cols = np.nonzero(changed.any(axis=0))[0]
    assert tc[cols].max() <= np.log10(20000.0) + g.dt
    for name in ("zahb", "hb_lower", "hb_upper"):
        assert name in on.curves
    assert "hb_lower" not in off.curves


def test_hot_white_dwarf_widening():
    # a 0.54 Msun white dwarf at 95 kK with log g 7.05 (MIST v1.2 cooling track, phase 6):
    # R = sqrt(G M / g) -> log L = 2 log R + 4 log(T/5772)
    from astropy import constants as const

    r = np.sqrt(const.G.cgs.value * 0.54 * const.M_sun.cgs.value / 10**7.05) / const.R_sun.cgs.value
    lt = np.log10(95000.0)
    ll = 2 * np.log10(r) + 4 * (lt - np.log10(5772.0))
    assert STAGES[stage_map(0.0).locate(lt, ll)] == "white_dwarf"
    assert STAGES[stage_map(0.0, wd_hot_tolerance=0.0).locate(lt, ll)] != "white_dwarf"
    # no change at or below 30 kK (where the widening starts)
    sm, s0 = stage_map(0.0), stage_map(0.0, wd_hot_tolerance=0.0)
    assert sm.wd_edge(np.log10(25000.0), "upper") == pytest.approx(s0.wd_edge(np.log10(25000.0), "upper"))


def test_piecewise_linear_matches_np_interp():
    # the bucketed evaluation must be the piecewise-linear function np.interp gives (numpy's
    # documented definition), at knots, between them, at both ends, outside and on NaN
    from hrstage.stagemap._map import PiecewiseLinear

    sm = stage_map(0.0)
    rng = np.random.default_rng(21)
    cases = [sm._ms_top, (sm._zams_logt, sm._logm), (sm._zams_logl, sm._logm),
             (np.sort(rng.uniform(0, 1, 60)), rng.normal(size=60))]
    for xp, fp in cases:
        xp, fp = np.asarray(xp, float), np.asarray(fp, float)
        f = PiecewiseLinear(xp, fp)
        o = np.argsort(xp, kind="stable")
        keep = np.r_[xp[o][1:] != xp[o][:-1], True]
        xs, fs = xp[o][keep], fp[o][keep]
        x = np.r_[rng.uniform(xs[0] - 0.2, xs[-1] + 0.2, 200_000), xs, xs[0], xs[-1], np.nan]
        want = np.interp(x, xs, fs, left=np.nan, right=np.nan)
        got = f(x)
        assert np.allclose(got, want, rtol=1e-12, atol=1e-12, equal_nan=True)
        assert np.isnan(got[-1]) and got[-2] == fs[-1] and got[-3] == fs[0]


def test_free_run_raster_is_conservative():
    # every cell within the stored run (both sides, both axes) has the cell's stage: probes of
    # fewer cells cannot change the label (what the classifier relies on to skip them)
    sm = stage_map(0.0)
    c = sm.codes.values
    v = sm.free_run.values
    unit = sm.FREE_RUN_UNIT
    rng = np.random.default_rng(5)
    ny, nx = c.shape
    for j, i in zip(rng.integers(0, ny, 3000), rng.integers(0, nx, 3000)):
        kx, ky = int(v[j, i] & 15) * unit, int(v[j, i] >> 4) * unit
        assert i - kx >= 0 and i + kx < nx and j - ky >= 0 and j + ky < ny
        assert (c[j, i - kx : i + kx + 1] == c[j, i]).all()
        assert (c[j - ky : j + ky + 1, i] == c[j, i]).all()
    assert (v & 15).mean() > 2  # and it is not trivially zero


def test_no_hole_between_white_dwarfs_and_main_sequence_for_hot_stars():
    # sdA stars and pre-/extremely-low-mass white dwarfs: 7000-20000 K, log g 5.5-6.5, ~0.15-0.4 Msun
    # (Kepler et al. 2016, MNRAS 455, 3413; from memory). L = M (g_sun / g) (T / T_sun)^4 with the
    # IAU 2015 nominal Sun (log g_sun 4.438, T_sun 5772 K). They used to fall in a gap between the
    # subdwarf region (1.2 dex under the main sequence) and the white-dwarf band.
    from hrstage.classifier import classify_hr

    t = np.array([8000.0, 10000.0, 12000.0, 15000.0, 18000.0])
    for m, logg in ((0.2, 5.5), (0.2, 5.8), (0.3, 5.6)):
        logl = np.log10(m) + 4.438 - logg + 4 * np.log10(t / 5772.0)
        st = classify_hr(np.log10(t), logl, feh=0.0).stage
        assert np.all(np.isin(st, ("subdwarf", "white_dwarf"))), (m, logg, st)
    # every cell from 7500 K to the hot-subdwarf box, between the white-dwarf band and the main
    # sequence, has a stage
    sm = stage_map(0.0)
    lt = np.linspace(np.log10(7600.0), np.log10(19500.0), 40)
    for x in lt:
        lo = float(sm.wd_edge(x, "lower"))
        hi = float(sm.ms_lower_at(x))
        ll = np.linspace(lo + 0.02, hi - 0.02, 30)
        st = classify_hr(np.full_like(ll, x), ll, feh=0.0).stage
        assert not np.any(st == "unclassified"), (x, ll[st == "unclassified"])
