"""The faster stage-map build gives bit-identical rasters to the previous algorithm.

The reference is the previous implementation, kept here privately: the whole-raster scan-line
painter (one full-size cumulative sum and boolean assignment per polygon) and the mass raster
with the track inversions evaluated on every row and the white-dwarf relation on every cell.
Maps are built through :class:`StageMap` directly (not the cache) so that each test sees a fresh
build. This checks the build against itself, not the physics: the physics checks (published
values) are in ``test_stagemap.py``.
"""

import numpy as np
import pytest

from hrstage.models import hpt2000 as hpt
from hrstage.stagemap import RAW_BINARY, RAW_EXTRAPOLATED, RAW_HB, RAW_STAGE, StageParams
from hrstage.stagemap import _map
from hrstage.stagemap._loci import LOG_TSUN
from hrstage.stagemap._raster import Grid, fill_polygon, fill_polygon_strips
from hrstage.stages import (BRIGHT_GIANT, GIANT, MAIN_SEQUENCE, PRE_MAIN_SEQUENCE, SUBGIANT, SUPERGIANT, UNCLASSIFIED,
                            WHITE_DWARF)


# ----------------------------------------------------------------------------- previous algorithm
def _ref_fill_polygon(poly, grid):
    poly = np.asarray(poly, dtype=float)
    nx, ny = grid.nx, grid.ny
    x = (poly[:, 0] - grid.t0) / grid.dt - 0.5
    y = (poly[:, 1] - grid.l0) / grid.dl - 0.5
    x1, y1 = x, y
    x2, y2 = np.roll(x, -1), np.roll(y, -1)
    ylo, yhi = np.minimum(y1, y2), np.maximum(y1, y2)
    jlo = np.clip(np.ceil(ylo), 0, ny).astype(np.int64)
    jhi = np.clip(np.ceil(yhi), 0, ny).astype(np.int64)
    count = np.maximum(np.where(y1 != y2, jhi - jlo, 0), 0)
    mask = np.zeros((ny, nx), dtype=bool)
    total = int(count.sum())
    if total == 0:
        return mask
    edge = np.repeat(np.arange(len(x)), count)
    start = np.repeat(np.cumsum(count) - count, count)
    j = jlo[edge] + (np.arange(total) - start)
    xc = x1[edge] + (j - y1[edge]) * (x2[edge] - x1[edge]) / (y2[edge] - y1[edge])
    order = np.lexsort((xc, j))
    j, xc = j[order], xc[order]
    c = np.clip(np.ceil(xc), 0, nx).astype(np.int64)
    first = np.r_[True, j[1:] != j[:-1]]
    rank = np.arange(total) - np.maximum.accumulate(np.where(first, np.arange(total), 0))
    sign = np.where(rank % 2 == 0, 1, -1).astype(np.int16)
    diff = np.zeros((ny, nx + 1), dtype=np.int16)
    np.add.at(diff, (j, c), sign)
    return np.cumsum(diff[:, :nx], axis=1, dtype=np.int16) > 0


def _ref_raw(sm):
    g = sm.grid
    raw = np.full((g.ny, g.nx), UNCLASSIFIED, dtype=np.int8)
    for code, poly in sm._polygons():
        mask = _ref_fill_polygon(poly, g)
        if code == "hb":
            mask &= (raw & RAW_STAGE) == SUBGIANT
            raw[mask] = (raw[mask] & ~np.int8(RAW_STAGE)) | np.int8(GIANT | RAW_HB)
        elif code == "young":
            st = raw & RAW_STAGE
            mask &= (st == SUBGIANT) | (st == GIANT)
            raw[mask] = PRE_MAIN_SEQUENCE
        elif code == "binary":
            mask &= (raw & RAW_STAGE) != MAIN_SEQUENCE
            if sm.params.binary_promote:
                raw[mask] |= RAW_BINARY
            else:
                raw[mask] = MAIN_SEQUENCE | RAW_BINARY
        else:
            raw[mask] = code
    tc, _ = g.centres()
    cool = tc < sm._logt_valid_min
    ms = (raw[:, cool] & RAW_STAGE) == MAIN_SEQUENCE
    raw[:, cool] = np.where(ms, raw[:, cool] | RAW_EXTRAPOLATED, raw[:, cool])
    _, lc = g.centres()
    bright = lc > sm._logl_valid_max
    ms = (raw[bright] & RAW_STAGE) == MAIN_SEQUENCE
    raw[bright] = np.where(ms, raw[bright] | RAW_EXTRAPOLATED, raw[bright])
    return raw


def _ref_invert_tracks(track_logt, track_logl, logm, row_logl, col_logt):
    n_m = len(logm)
    tcut = np.full((len(row_logl), n_m), np.nan)
    for i in range(n_m):
        tl, tt = track_logl[i], track_logt[i]
        ok = np.isfinite(tl) & np.isfinite(tt)
        if ok.sum() < 2:
            continue
        tl, tt = tl[ok], tt[ok]
        if tl[-1] < tl[0]:
            tl, tt = tl[::-1], tt[::-1]
        tl = np.maximum.accumulate(tl)
        tcut[:, i] = np.interp(row_logl, tl, tt, left=np.nan, right=np.nan)
    out = np.full((len(row_logl), len(col_logt)), np.nan, dtype=np.float32)
    for r in range(len(row_logl)):
        ok = np.isfinite(tcut[r])
        if ok.sum() < 2:
            continue
        tt, mm = tcut[r, ok], logm[ok]
        o = np.argsort(tt, kind="stable")
        out[r] = np.interp(col_logt, tt[o], mm[o])
    return out


def _ref_mass(sm, raw):
    L, g = sm.loci, sm.grid
    fx, fy = sm.mass_factor
    cg = g.coarsen(fx, fy)
    ct, cl = cg.centres()
    codes = (raw & RAW_STAGE)[fy // 2 :: fy, fx // 2 :: fx][: cg.ny, : cg.nx]
    mass = np.full((cg.ny, cg.nx), np.nan, dtype=np.float32)
    m = L.m
    logm = np.log10(m)
    ms_raster = _ref_invert_tracks(*L.ms_tracks(m), logm, cl, ct)
    ev = L.evolved & (m < 0.999 * sm.m_fgb)
    hg_raster = _ref_invert_tracks(*L.hg_tracks(m[ev]), logm[ev], cl, ct)
    gb_raster = _ref_invert_tracks(*L.giant_tracks(m[ev], logl_max=min(g.l1, 5.5)), logm[ev], cl, ct)
    hi = (m >= sm.m_hef) & np.isfinite(L.logl_post)
    lp = np.maximum.accumulate(L.logl_post[hi])
    sg_raster = np.broadcast_to(np.interp(cl, lp, logm[hi], left=np.nan, right=np.nan)[:, None], mass.shape)
    mw = np.linspace(0.1, 1.43, 400)
    rw = np.log10(hpt.wd_radius(mw))
    logr = 0.5 * cl[:, None] - 2.0 * (ct[None, :] - LOG_TSUN)
    # larger than eq 91 allows (the extremely-low-mass part of the band): its lowest mass, 0.1 Msun
    wd_raster = np.interp(logr, rw[::-1], np.log10(mw)[::-1], left=np.nan, right=np.log10(mw[0]))
    for code, src in (
        (MAIN_SEQUENCE, ms_raster),
        (SUBGIANT, hg_raster),
        (GIANT, gb_raster),
        (BRIGHT_GIANT, gb_raster),
        (SUPERGIANT, sg_raster),
        (WHITE_DWARF, wd_raster),
    ):
        sel = codes == code
        mass[sel] = src[sel]
    # supergiants left of the main sequence (stripped massive stars): no mass
    mass[(codes == SUPERGIANT) & sm.stripped_massive(ct[None, :], cl[:, None])] = np.nan
    fallback = (codes == BRIGHT_GIANT) & ~np.isfinite(mass)
    mass[fallback] = sg_raster[fallback]
    rawc = raw[fy // 2 :: fy, fx // 2 :: fx][: cg.ny, : cg.nx]
    hbc = (rawc & RAW_HB) != 0
    if hbc.any():
        mass[hbc] = np.broadcast_to(np.log10(sm._hb_mass(ct))[None, :], mass.shape)[hbc]
    return (10.0 ** mass).astype(np.float32)


# ----------------------------------------------------------------------------- checks
@pytest.mark.parametrize(
    "feh, params",
    [
        (0.0, StageParams()),
        (-1.0, StageParams()),
        (-2.2, StageParams()),
        (0.3, StageParams(binary_promote=True, hb_height=0.0)),
        (0.0, StageParams(young_prior=0.9)),
    ],
)
def test_build_identical_to_previous_algorithm(feh, params):
    sm = _map.StageMap(feh, params)
    raw = _ref_raw(sm)
    assert np.array_equal(sm.raw.values, raw)
    assert np.array_equal(sm.codes.values, raw & RAW_STAGE)
    ref_mass = _ref_mass(sm, raw)
    assert sm.mass_lookup.values.dtype == ref_mass.dtype
    assert np.array_equal(sm.mass_lookup.values, ref_mass, equal_nan=True)
    # the map is not trivially empty: every painted stage is present
    present = set(np.unique(raw & RAW_STAGE).tolist())
    assert {MAIN_SEQUENCE, SUBGIANT, GIANT, BRIGHT_GIANT, SUPERGIANT, WHITE_DWARF} <= present


def test_strips_reassemble_to_whole_raster_fill():
    # random star-shaped polygons (also degenerate ones: collinear, tiny, partly off the grid)
    g = Grid(dt=0.004, dl=0.01)
    rng = np.random.default_rng(11)
    polys = []
    for _ in range(6):
        ang = np.sort(rng.uniform(0, 2 * np.pi, 40))
        r = rng.uniform(0.05, 1.2, 40)
        polys.append(np.c_[4.3 + r * np.cos(ang), 0.5 + 7 * r * np.sin(ang)])
    # thin bands running off the left and right edges, and a box with vertices on cell centres
    polys.append(np.array([[3.0, -5.0], [5.6, 6.0], [5.6, 6.3], [3.0, -4.7]]))
    polys.append(np.array([[3.3005, 0.00125], [3.4005, 0.00125], [3.4005, 1.00125], [3.3005, 1.00125]]))
    polys.append(np.array([[3.5, -1.0], [4.0, 0.0], [4.5, 1.0]]))  # collinear: empty
    polys.append(np.array([[4.0001, 0.0001], [4.0002, 0.0001], [4.0002, 0.0002]]))  # below a cell
    for poly in polys:
        ref = _ref_fill_polygon(poly, g)
        assert np.array_equal(fill_polygon(poly, g), ref)
        for n_rows in (1, 7, 128):
            strips = fill_polygon_strips(poly, g, rows=n_rows)
            rows = [(j0, j1) for (j0, j1, _, _), _m in strips]
            assert all(a[1] <= b[0] for a, b in zip(rows, rows[1:]))  # disjoint, in order
            assert all(j1 - j0 <= n_rows for j0, j1 in rows)
            covered = np.zeros_like(ref)
            for (j0, j1, i0, i1), sub in strips:
                assert sub.shape == (j1 - j0, i1 - i0) and sub.flags.writeable
                covered[j0:j1, i0:i1] = sub
            assert np.array_equal(covered, ref)


def test_invert_tracks_rows_subset_matches_all_rows():
    sm = _map.StageMap(-0.5, StageParams())
    L = sm.loci
    cg = sm.grid.coarsen(*sm.mass_factor)
    ct, cl = cg.centres()
    tr_t, tr_l = L.ms_tracks(L.m)
    logm = np.log10(L.m)
    full = _ref_invert_tracks(tr_t, tr_l, logm, cl, ct)
    rows = np.zeros(len(cl), dtype=bool)
    rows[::3] = True
    part = _map._invert_tracks(tr_t, tr_l, logm, cl, ct, rows=rows)
    assert np.array_equal(part[rows], full[rows], equal_nan=True)
    assert np.isnan(part[~rows]).all()
    assert np.isfinite(full[~rows]).any()


def test_invert_tracks_needed_cells_match_all_cells():
    # only the needed cells of a row are computed (from its first to its last needed one); they
    # equal the whole-raster inversion of the previous algorithm, the rest stays NaN
    sm = _map.StageMap(-1.5, StageParams())
    L = sm.loci
    cg = sm.grid.coarsen(*sm.mass_factor)
    ct, cl = cg.centres()
    ev = L.evolved & (L.m < 0.999 * sm.m_fgb)
    logm = np.log10(L.m)
    rng = np.random.default_rng(2)
    for t, l, lm in [(*L.ms_tracks(L.m), logm), (*L.hg_tracks(L.m[ev]), logm[ev])]:
        full = _ref_invert_tracks(t, l, lm, cl, ct)
        need = rng.random(full.shape) < 0.01
        need[:, :3] = True  # first columns, and a whole row, a single cell, an empty row
        need[len(cl) // 2] = True
        need[len(cl) // 3] = False
        need[len(cl) // 3, 500] = True
        need[len(cl) // 4] = False
        part = _map._invert_tracks(t, l, lm, cl, ct, need=need)
        assert np.array_equal(part[need], full[need], equal_nan=True)
        assert np.isfinite(part[need]).any()
        assert np.isnan(part[len(cl) // 4]).all()
        span = np.zeros_like(need)
        for r in np.flatnonzero(need.any(axis=1)):
            c = np.flatnonzero(need[r])
            span[r, c[0] : c[-1] + 1] = True
        assert np.isnan(part[~span]).all()
