"""The stage map of one metallicity: curves, stage regions, raster lookup, masses, export."""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np

from ..errors import HrstageInputError
from ..models import hpt2000 as hpt
from ..models.hpt2000.core_mass import luminosity_from_mc
from ..models.stellar import LOGG_SUN
from ..models.metallicity import clip_z, feh_from_z, z_from_feh
from ..stages import (
    BRIGHT_GIANT,
    CODE,
    GIANT,
    HOT_SUBDWARF,
    LABELS,
    MAIN_SEQUENCE,
    PRE_MAIN_SEQUENCE,
    STAGES,
    SUBDWARF,
    SUBGIANT,
    SUPERGIANT,
    UNCLASSIFIED,
    WHITE_DWARF,
)
from ._loci import LOG_TSUN, Loci, logt_from_lr
from ._params import StageParams
from . import _store
from ._raster import Grid, Lookup, fill_polygon_strips, run_levels

#: bit of a raw raster code: the cell is in the unresolved-binary band above the main sequence
RAW_BINARY = 16
#: bit of a raw raster code: main sequence extrapolated below 0.1 Msun (outside the fits)
RAW_EXTRAPOLATED = 32
#: bit of a raw raster code: giant because the cell is in the core-helium-burning (horizontal-branch)
#: band where it overlaps the Hertzsprung gap
RAW_HB = 64
#: mask of the stage code inside a raw raster code
RAW_STAGE = 15

#: log Teff range over which the extra hot-white-dwarf widening grows from 0 to its full value
LOGT_WD_HOT = (float(np.log10(30000.0)), 5.0)

#: highest [Fe/H] (dex) for which the boundaries of the fits' top metallicity (Z = 0.03, [Fe/H] = +0.18)
#: are used unchanged, without a flag: the PARSEC v1.2S isochrones of Z = 0.03 and 0.04 ([M/H] = +0.32,
#: +0.46; Bressan et al. 2012) are classified as well on them as the Z = 0.014 ones on the solar map
#: (docs/stagemap.md, tests/classifier/test_metal_rich.py). Beyond it the map is clipped and flagged.
FEH_HELD_MAX = 0.5

#: lowest log Teff of the main-sequence extension below 0.1 Msun
LOGT_MS_EXTENSION = 3.36
#: log Teff from which the subdwarf region has no depth limit (down to the white-dwarf band): 6000 K.
#: Between the metal-poor dwarfs (at most `subdwarf_depth` under the main sequence) and the white-dwarf
#: band only compact stars live: the sdA stars (H-rich, log g 5.5-6.5 below 20 000 K: Kepler et al.
#: 2016, MNRAS 455, 3413, range as quoted by Hermes, Gaensicke & Breedt 2017, ASP Conf. Ser. 509, 453)
#: and the (pre-)extremely-low-mass white dwarfs among them, radii smaller than any main-sequence
#: star's (Pelisoli et al. 2018, MNRAS 475, 2480; 2019, MNRAS 482, 3831), which contract through
#: 6000-7500 K on their way to the cooling track (He-core proto-white-dwarf tracks, e.g. Althaus,
#: Miller Bertolami & Corsico 2013, A&A 557, A19: from memory)
LOGT_SUBDWARF_DOWN_TO_WD = float(np.log10(6000.0))

#: heaviest carbon-oxygen core (Msun) a post-AGB star can have: the most massive CO white dwarfs
#: made by single stars, ~1.0-1.05 Msun (heavier cores ignite carbon: ONe white dwarfs, HPT2000
#: section 6.1; value from memory). Its core-mass--luminosity (HPT2000 eq 37, the AGB luminosity
#: a post-AGB star keeps while it heats up at constant L) gives the top of the post-AGB region,
#: log L = 4.48; above it, left of the main sequence, only stripped massive stars (Wolf-Rayet)
POST_AGB_MC_MAX = 1.0
#: lightest CO core (Msun) of a post-AGB star: the lowest final mass of the Miller Bertolami 2016 solar-
#: metallicity post-AGB tracks (A&A 588, A25; value from memory, CSPN final masses 0.53-0.58 Msun are
#: typical, Gesicki et al. 2016 from those tracks); its HPT2000 eq 37 luminosity, log L 3.65, is the
#: faintest constant-luminosity post-AGB crossing
POST_AGB_MC_MIN = 0.53

#: mass-estimate method of each stage (index = stage code)
MASS_METHODS = (
    "ms_tracks",       # main sequence: interpolation between ZAMS and upper edge along mass tracks
    "hg_tracks",       # subgiant: interpolation across the Hertzsprung gap along mass tracks
    "giant_branch",    # giant: inversion of R_GB(M, L) (R_AGB above L_HeI) at the star's L
    "giant_branch",    # bright giant: same
    "supergiant_lum",  # supergiant: mean post-MS luminosity-mass relation
    "wd_radius",       # white dwarf: HPT2000 eq 91 mass-radius relation
    "none",            # subdwarf
    "none",            # hot subdwarf
    "none",            # pre-main sequence
    "none",            # unclassified
)
assert len(MASS_METHODS) == len(STAGES) and CODE["pre_main_sequence"] == PRE_MAIN_SEQUENCE

#: mass (Msun) whose fully convective radius (HPT2000 eq 46) stands for the Hayashi line that bounds
#: the pre-main-sequence region on the cool side: the lowest mass of the fits
HAYASHI_MASS = 0.1

CITATIONS = (
    "Tout C. A., Pols O. R., Eggleton P. P., Han Z., 1996, MNRAS 281, 257 (ZAMS)",
    "Hurley J. R., Pols O. R., Tout C. A., 2000, MNRAS 315, 543 (TAMS, MS evolution, BGB, R_GB, "
    "He ignition, AGB radius, core mass at the BAGB, white-dwarf radius)",
    "Straizys V., Kuriliene G., 1981, Ap&SS 80, 353 (class II vs Ib luminosities: bright-giant band)",
    "Hurley J. R., Pols O. R., Tout C. A., 2000, MNRAS 315, 543, eqs 51, 53, 54, 77, 78 (zero-age "
    "horizontal branch: core-helium-burning band)",
    "Hurley J. R., Pols O. R., Tout C. A., 2000, MNRAS 315, 543, eqs 4-10, 26-27, 46 (subgiant and giant "
    "branch of the oldest population and the Hayashi line: pre-main-sequence region)",
    "Hayashi C., 1961, PASJ 13, 450 (fully convective stars: the cool limit of hydrostatic stars)",
)


@dataclass(frozen=True)
class Curve:
    """One locus: arrays of (log Teff, log L) and the initial mass of each point (NaN if none)."""

    name: str
    label: str
    logt: np.ndarray
    logl: np.ndarray
    mass: np.ndarray


def _interp_monotone(x, xp, fp, left=np.nan, right=np.nan):
    xp = np.asarray(xp, float)
    fp = np.asarray(fp, float)
    ok = np.isfinite(xp) & np.isfinite(fp)
    xp, fp = xp[ok], fp[ok]
    o = np.argsort(xp, kind="stable")
    return np.interp(x, xp[o], fp[o], left=left, right=right)


class PiecewiseLinear:
    """Fast evaluation of the piecewise-linear function through knots ``(xp, fp)`` (as np.interp).

    Same function as ``np.interp(x, xp, fp, left, right)`` on the finite, sorted knots (the last of
    repeated abscissae wins), found without a binary search: a uniform bucket table gives the
    segment of each query to within the few knots of its bucket, then a handful of vectorised
    steps settle it. Built once per map and curve (cached); several times faster than np.interp
    on unsorted queries of a catalogue.
    """

    def __init__(self, xp, fp, left=np.nan, right=np.nan, max_buckets=1 << 16):
        xp = np.asarray(xp, float)
        fp = np.asarray(fp, float)
        ok = np.isfinite(xp) & np.isfinite(fp)
        xp, fp = xp[ok], fp[ok]
        o = np.argsort(xp, kind="stable")
        xp, fp = xp[o], fp[o]
        keep = np.r_[xp[1:] != xp[:-1], True]
        self.xp, self.fp = xp[keep], fp[keep]
        self.left, self.right = float(left), float(right)
        m = len(self.xp)
        self.m = m
        if m < 2:
            return
        self.slope = np.diff(self.fp) / np.diff(self.xp)
        span = self.xp[-1] - self.xp[0]
        nb = int(min(max_buckets, max(1, np.ceil(span / max(np.diff(self.xp).min(), span / max_buckets)))))
        self.nb = nb
        self.x0 = self.xp[0]
        self.inv_h = nb / span
        edges = self.x0 + np.arange(nb) / self.inv_h
        self.start = np.clip(np.searchsorted(self.xp, edges, side="right") - 1, 0, m - 2).astype(np.int32)
        end = np.r_[self.start[1:], m - 2]
        self.steps = int((end - self.start).max()) + 1
        # buckets where a query may have to advance past a knot (most hold none): only their
        # queries run the stepping loop
        nxt = np.r_[edges[1:], np.inf]
        tol = 1e-9 * span
        self.needs = (self.start < m - 2) & (self.xp[np.minimum(self.start + 1, m - 1)] <= nxt + tol)

    def __call__(self, x) -> np.ndarray:
        x = np.asarray(x, dtype=float)
        if self.m < 2:
            return np.interp(x, self.xp, self.fp, left=self.left, right=self.right) if self.m else np.full(x.shape, np.nan)
        b = (x - self.x0) * self.inv_h
        np.fmax(b, 0.0, out=b)
        np.fmin(b, self.nb - 1, out=b)
        bi = b.astype(np.int32)
        j = self.start.take(bi)
        xp = self.xp
        loop = np.nonzero(self.needs.take(bi))[0]
        if len(loop):
            xs, js = x[loop], j[loop]
            for _ in range(self.steps):
                adv = xs >= xp.take(js + 1)
                adv &= js < self.m - 2
                if not adv.any():
                    break
                js += adv
            j[loop] = js
        y = self.slope.take(j)
        y *= x - xp.take(j)
        y += self.fp.take(j)
        edge = ~((x >= xp[0]) & (x < xp[-1]))  # below, at or beyond the last knot, or NaN
        if edge.any():
            k = np.nonzero(edge)[0]
            xk, yk = x[k], y[k]
            yk[xk < xp[0]] = self.left
            yk[xk > xp[-1]] = self.right
            yk[xk == xp[-1]] = self.fp[-1]
            yk[np.isnan(xk)] = np.nan
            y[k] = yk
        return y


def _invert_tracks(track_logt, track_logl, logm, row_logl, col_logt, rows=None, need=None):
    """Mass raster from tracks: each track is cut at each row's log L, masses interpolated in T.

    Rows where fewer than two tracks reach the luminosity get NaN; along a row, cells beyond the
    outermost tracks get the mass of the nearest one (clamped). ``rows`` (boolean, one per row):
    only these rows are computed, the others are left NaN. ``need`` (boolean, rows x columns):
    only the rows holding a needed cell are computed, each only from its first to its last
    needed cell, the rest is left NaN. Every cell's value depends on its row's tracks and its own
    log T alone, so a computed cell is the same whichever others are computed.
    """
    n_m = len(logm)
    out = np.full((len(row_logl), len(col_logt)), np.nan, dtype=np.float32)
    if need is not None:
        have = need.any(axis=1)
        rows = have if rows is None else rows & have
        c0 = np.argmax(need, axis=1)
        c1 = need.shape[1] - np.argmax(need[:, ::-1], axis=1)
    todo = np.arange(len(row_logl)) if rows is None else np.flatnonzero(rows)
    if len(todo) == 0:
        return out
    rl = row_logl[todo]
    tcut = np.full((len(todo), n_m), np.nan)
    for i in range(n_m):
        tl, tt = track_logl[i], track_logt[i]
        ok = np.isfinite(tl) & np.isfinite(tt)
        if ok.sum() < 2:
            continue
        tl, tt = tl[ok], tt[ok]
        if tl[-1] < tl[0]:
            tl, tt = tl[::-1], tt[::-1]
        tl = np.maximum.accumulate(tl)
        tcut[:, i] = np.interp(rl, tl, tt, left=np.nan, right=np.nan)
    # per row, the tracks that reach it in order of log T (a stable sort puts the NaNs last and
    # keeps the finite cuts in the order a stable sort of them alone gives)
    n_ok = np.isfinite(tcut).sum(axis=1)
    order = np.argsort(tcut, axis=1, kind="stable")
    tsort = np.take_along_axis(tcut, order, axis=1)
    msort = logm[order]
    for k in np.flatnonzero(n_ok >= 2):
        r, n = todo[k], n_ok[k]
        if need is None:
            out[r] = np.interp(col_logt, tsort[k, :n], msort[k, :n])
        else:
            a, b = c0[r], c1[r]
            out[r, a:b] = np.interp(col_logt[a:b], tsort[k, :n], msort[k, :n])
    return out


class StageMap:
    """Stage boundaries and regions in (log Teff, log L) for one metallicity.

    Build through :func:`stage_map` (cached). Attributes: ``feh`` (the [Fe/H] asked for), ``z``
    (the fits' Z actually used, clipped to 1e-4..0.03), ``z_clipped`` (outside [Fe/H] -2.3..+0.5:
    flag the star), ``z_held`` (+0.18 < [Fe/H] <= +0.5: the Z = 0.03 boundaries, checked), ``params``
    (:class:`StageParams`), ``curves``, ``regions``, ``grid`` (raster extent and resolution),
    ``m_hef``, ``m_fgb``, ``m_sg`` (supergiant mass), ``m_age`` (mass reaching its TAMS at
    ``max_age_myr``).
    """

    grid = Grid()
    #: the mass raster is coarser by these factors in log T and log L
    mass_factor = (2, 4)

    def __init__(self, feh: float = 0.0, params: StageParams | None = None):
        self.params = params if params is not None else StageParams()
        feh = float(feh)
        if not np.isfinite(feh):
            raise HrstageInputError(f"stage map: [Fe/H]={feh!r} is not a finite number")
        zc, clipped = clip_z(z_from_feh(feh))
        self.feh = feh
        self.z = float(zc)
        #: [Fe/H] above the fits' Z = 0.03 but within FEH_HELD_MAX: boundaries of Z = 0.03 (checked, no flag)
        self.z_held = bool(clipped) and feh_from_z(zc) < feh <= FEH_HELD_MAX
        self.z_clipped = bool(clipped) and not self.z_held
        self.feh_used = float(feh_from_z(self.z))
        self.loci = Loci(self.z, self.params)
        L = self.loci
        self.m_hef, self.m_fgb, self.m_sg, self.m_age = L.m_hef, L.m_fgb, L.m_sg, L.m_age
        self._edges()
        self._store = _store.folder(self)
        if not self._restore():     # the rasters from the on-disk cache, else built (and stored)
            self._paint()
            self._masses()
            self._young_zone_lookup()
            self._keep()
        self._relations()
        self._regions = None

    # ------------------------------------------------------------------ construction
    def _edges(self):
        p, L, g = self.params, self.loci, self.grid
        m = L.m
        zt, zl = L.zams
        ut, ul = L.ms_upper
        # low-mass upper edge moved to the cool side (full below 0.45 Msun, none above 0.7), more at
        # the lowest masses (ms_cool_logt_lowest at 0.1 Msun, tapering to ms_cool_logt at 0.13 Msun)
        w = np.clip(np.log10(0.7 / m) / np.log10(0.7 / 0.45), 0.0, 1.0)
        v = np.clip(np.log10(0.13 / m) / np.log10(0.13 / 0.1), 0.0, 1.0)
        ut = ut - p.ms_cool_logt * w - max(p.ms_cool_logt_lowest - p.ms_cool_logt, 0.0) * v
        lower_t, lower_l = zt + p.ms_hot_logt, zl - p.ms_below_zams
        # extension of both MS edges below 0.1 Msun, straight in (log T, log L)
        k = 6
        slope_z = np.polyfit(lower_t[:k], lower_l[:k], 1)[0]
        slope_u = np.polyfit(ut[:k], ul[:k], 1)[0]
        ext_t = np.linspace(LOGT_MS_EXTENSION, lower_t[0], 8)[:-1]
        ext_tu = np.linspace(LOGT_MS_EXTENSION - max(p.ms_cool_logt, p.ms_cool_logt_lowest), ut[0], 8)[:-1]
        # above 100 Msun (the fits' top mass) the lower edge goes on straight, along the ZAMS slope of
        # the last masses, and the upper edge straight up at the Teff of 100 Msun, to the top of the
        # raster: very massive main-sequence stars (extrapolated, flagged)
        up = g.l1 + 0.1
        slope_top = np.polyfit(lower_l[-k:], lower_t[-k:], 1)[0]  # dlogT/dlogL of the ZAMS at 70-100 Msun
        t_up = lower_t[-1] + max(slope_top, 0.0) * (up - lower_l[-1])
        self._ms_lower = (np.r_[ext_t, lower_t, t_up], np.r_[lower_l[0] + slope_z * (ext_t - lower_t[0]), lower_l, up])
        self._ms_top = (np.r_[ext_tu, ut, ut[-1]], np.r_[ul[0] + slope_u * (ext_tu - ut[0]), ul, max(up, ul[-1])])
        self._logl_valid_max = float(zl[-1])
        self._logt_valid_min = float(zt[0])
        # supergiant lower edge: the Hertzsprung-gap track of M_sg, then flat to the cool edge
        ht, hl = L.hg_track(self.m_sg)
        self._sg_lower = (np.r_[ht, g.t0 - 0.01], np.r_[hl, hl[-1]])
        # white-dwarf band edges (constant radius lines)
        r_hi = float(hpt.wd_radius(p.wd_mass_min))
        r_lo = float(hpt.wd_radius(p.wd_mass_max))
        self._wd_logr = (np.log10(r_lo), np.log10(r_hi))
        self._logt_wd_min = float(np.log10(p.wd_teff_min))
        self._hb_band = self._hb_edges()
        self._old_branch, self._hayashi = self._pms_edges()
        #: top (log L) of the post-AGB region left of the main sequence: core-mass--luminosity
        #: relation (HPT2000 eq 37) at POST_AGB_MC_MAX
        self.logl_post_agb_max = float(np.log10(luminosity_from_mc(POST_AGB_MC_MAX, POST_AGB_MC_MAX, self.z)))
        #: faintest constant-luminosity post-AGB crossing (HPT2000 eq 37 at POST_AGB_MC_MIN)
        self.logl_post_agb_min = float(np.log10(luminosity_from_mc(POST_AGB_MC_MIN, POST_AGB_MC_MIN, self.z)))

    def _pms_edges(self):
        """Edges of the pre-main-sequence region: the oldest population's subgiant + giant branch and
        the Hayashi line, as (logt, logl) curves ascending in log L up to ``pms_logl_max``.

        Oldest population: the mass that just reaches its TAMS at ``max_age_myr``; its subgiant
        branch is its Hertzsprung-gap track from the TAMS to the base of the giant branch (HPT2000
        eqs 8-10, 26-27, 46), its giant branch R_GB (eq 46) above, moved ``pms_rgb_margin`` cooler.
        Hayashi line: R_GB of HAYASHI_MASS (fully convective), ``pms_hayashi_logt`` cooler.
        """
        p, L = self.params, self.loci
        z = self.z
        top = p.pms_logl_max
        st, sl = L.hg_track(self.m_age, n=40)
        lg = np.linspace(sl[-1], max(top, sl[-1]) + 0.05, 80)[1:]
        rg = np.log10(hpt.r_gb(self.m_age, 10.0**lg, z))
        tg = logt_from_lr(lg, rg) - p.pms_rgb_margin
        old = (np.r_[st, tg], np.r_[sl, lg])
        lh = np.linspace(self.grid.l0, top + 0.05, 200)
        th = logt_from_lr(lh, np.log10(hpt.r_gb(HAYASHI_MASS, 10.0**lh, z))) - p.pms_hayashi_logt
        return old, (th, lh)

    def _pms_polygons(self):
        """(certainly young region, young-or-evolved zone) polygons, or None where empty.

        Both are built row by row in log L up to ``pms_logl_max``, from their cool edge to the
        main-sequence lower edge (the main sequence and the binary band are painted over them
        afterwards, so only what lies above the band remains): the young region from the Hayashi
        line to the oldest subgiant/giant branch (or the main sequence below the oldest TAMS), the
        zone from that branch to the main sequence (stars there may be young or evolved).
        """
        p = self.params
        ot, ol = self._old_branch
        ht, hl = self._hayashi
        lt, ll = self._ms_lower
        lo = float(hl[0])
        rows = np.linspace(lo, p.pms_logl_max, 700)
        t_ms = _interp_monotone(rows, ll, lt)
        t_old = np.interp(rows, ol, ot, left=np.nan, right=np.nan)
        t_hay = np.interp(rows, hl, ht)
        t_hot = np.where(np.isfinite(t_old), np.fmin(t_old, t_ms), t_ms)

        def band(a, b):
            keep = np.isfinite(a) & np.isfinite(b) & (a < b)
            if keep.sum() < 2:
                return None
            k = np.flatnonzero(keep)
            k = k[: np.argmax(np.diff(np.r_[k, k[-1] + 2]) > 1) + 1]  # the first contiguous run
            r = rows[k]
            return np.c_[np.r_[a[k], b[k][::-1]], np.r_[r, r[::-1]]]

        return band(t_hay, t_hot), band(t_old, t_ms)

    def _hb_edges(self):
        """Core-He-burning band: (logt, lower, upper) per 0.005-dex log T bin, or None if off.

        Lower edge: the faintest ZAHB sample of the bin - ``hb_depth``; upper edge: the brightest +
        ``hb_height``; from the coolest ZAHB sample to ``hb_teff_max``.
        """
        p, L = self.params, self.loci
        if p.hb_height <= 0:
            return None
        t, l = L.zahb_logt, L.zahb_logl
        ok = np.isfinite(t) & np.isfinite(l)
        t, l = t[ok], l[ok]
        t_hi = min(float(t.max()), float(np.log10(p.hb_teff_max)))
        step = 0.005
        edges = np.arange(float(t.min()), t_hi + step, step)
        k = np.clip(np.searchsorted(edges, t, side="right") - 1, 0, len(edges) - 1)
        lo = np.full(len(edges), np.inf)
        hi = np.full(len(edges), -np.inf)
        np.minimum.at(lo, k, l)
        np.maximum.at(hi, k, l)
        have = np.isfinite(lo)
        centres = np.minimum(edges + 0.5 * step, t_hi)
        lo = np.interp(centres, centres[have], lo[have])
        hi = np.interp(centres, centres[have], hi[have])
        tt = np.r_[edges[0], centres, t_hi]
        return tt, np.r_[lo[0], lo, lo[-1]] - p.hb_depth, np.r_[hi[0], hi, hi[-1]] + p.hb_height

    def _hb_mass(self, logt):
        """Typical current (horizontal-branch) mass of a ZAHB star of this log Teff (median per bin)."""
        L = self.loci
        t, m = L.zahb_logt, L.zahb_mass
        ok = np.isfinite(t) & np.isfinite(m)
        t, m = t[ok], m[ok]
        edges = np.linspace(t.min(), t.max(), 60)
        k = np.clip(np.searchsorted(edges, t) - 1, 0, len(edges) - 2)
        cen, med = [], []
        for j in np.unique(k):
            cen.append(0.5 * (edges[j] + edges[j + 1]))
            med.append(np.median(m[k == j]))
        return np.interp(logt, cen, med)

    def wd_edge(self, logt, which: str):
        """log L of the lower ('lower') or upper ('upper') edge of the white-dwarf band at logt."""
        p = self.params
        logt = np.asarray(logt, dtype=float)
        if which == "lower":
            return 2 * self._wd_logr[0] + 4 * (logt - LOG_TSUN) - p.wd_tolerance
        a, b = LOGT_WD_HOT
        hot = p.wd_hot_tolerance * np.clip((logt - a) / (b - a), 0.0, 1.0)
        up = 2 * self._wd_logr[1] + 4 * (logt - LOG_TSUN) + p.wd_tolerance + p.wd_envelope_tolerance + hot
        # extremely-low-mass (He-core) white dwarfs, cooler than the hot subdwarfs: the log g line
        # L = M (g_sun / g) (T / T_sun)^4 of wd_mass_min at wd_elm_logg
        elm = np.log10(p.wd_mass_min) + LOGG_SUN - p.wd_elm_logg + 4 * (logt - LOG_TSUN)
        return np.where(logt < np.log10(p.hot_subdwarf_teff[0]), np.maximum(up, elm), up)

    def stripped_massive(self, logt, logl) -> np.ndarray:
        """True where (logt, logl) lies hotter than the main-sequence lower edge and brighter than the
        post-AGB limit ``logl_post_agb_max``: the stripped massive stars (Wolf-Rayet, helium stars)."""
        logt = np.asarray(logt, dtype=float)
        logl = np.asarray(logl, dtype=float)
        t, l = self._ms_lower
        top = l >= self.logl_post_agb_max - 0.5     # the monotone upper part of the edge
        with np.errstate(invalid="ignore"):
            return (logl >= self.logl_post_agb_max) & (logt > np.interp(logl, l[top], t[top]))

    def ms_lower_at(self, logt):
        """log L of the lower edge of the main-sequence band (ZAMS - ms_below_zams) at logt."""
        t, l = self._ms_lower
        return _interp_monotone(logt, t, l)

    def _polygons(self):
        """Painting order and polygons (later ones paint over earlier ones)."""
        p, L, g = self.params, self.loci, self.grid
        top = g.l1 + 0.1
        cold = g.t0 - 0.01
        hot = g.t1 + 0.01
        polys = []
        # left of the main sequence and hotter than the hot-subdwarf box, above the white-dwarf band,
        # up to the post-AGB luminosity limit: bare cores heating up or contracting towards the
        # white-dwarf band -- post-AGB stars / central stars of planetary nebulae (log L above ~2.5)
        # and post-extreme-horizontal-branch sdO stars (below); labelled hot subdwarf (the
        # classifier says which in its reason). Painted first: every other region paints over it.
        t_hsd = np.log10(np.asarray(p.hot_subdwarf_teff))
        l_pagb = self.logl_post_agb_max
        tp = np.linspace(t_hsd[1], hot, 60)
        wd_tp = self.wd_edge(tp, "upper")
        keep = wd_tp < l_pagb
        polys.append((HOT_SUBDWARF, np.c_[np.r_[tp[keep], tp[keep][::-1]],
                                          np.r_[np.full(keep.sum(), l_pagb), wd_tp[keep][::-1]]]))
        # above it, hotter than the hot-subdwarf box's cool edge: stripped massive stars (Wolf-Rayet,
        # helium stars), labelled supergiant by luminosity; the main sequence paints over its part
        polys.append((SUPERGIANT, np.c_[[t_hsd[0], hot, hot, t_hsd[0]], [l_pagb, l_pagb, top, top]]))
        # subdwarfs and hot subdwarfs: under the MS lower edge
        tt = np.linspace(LOGT_MS_EXTENSION, t_hsd[0], 120)
        k = np.searchsorted(tt, LOGT_SUBDWARF_DOWN_TO_WD)
        tt = np.r_[tt[:k], np.nextafter(LOGT_SUBDWARF_DOWN_TO_WD, -np.inf), LOGT_SUBDWARF_DOWN_TO_WD, tt[k:]]
        upper = self.ms_lower_at(tt)
        lower = upper - p.subdwarf_depth
        wd_up = np.where(tt >= self._logt_wd_min, self.wd_edge(tt, "upper"), -np.inf)
        # hotter than LOGT_SUBDWARF_DOWN_TO_WD the subdwarf region reaches down to the white-dwarf band:
        # there the stars under the main sequence are compact (sdA stars, pre-/extremely-low-mass
        # white dwarfs, blue horizontal-branch stars), not metal-poor dwarfs, and no depth limit applies
        lower = np.where(tt >= LOGT_SUBDWARF_DOWN_TO_WD, wd_up, np.maximum(lower, wd_up))
        keep = lower < upper
        polys.append((SUBDWARF, np.c_[np.r_[tt[keep], tt[keep][::-1]], np.r_[upper[keep], lower[keep][::-1]]]))
        th = np.linspace(t_hsd[0], t_hsd[1], 40)
        # (no higher than the post-AGB limit: brighter stars left of the main sequence are massive)
        th_top = np.fmin(self.ms_lower_at(th), l_pagb)
        polys.append((HOT_SUBDWARF, np.c_[np.r_[th, th[::-1]], np.r_[th_top, self.wd_edge(th, "upper")[::-1]]]))
        tw = np.unique(np.r_[np.linspace(self._logt_wd_min, hot, 60), LOGT_WD_HOT])
        polys.append((WHITE_DWARF, np.c_[np.r_[tw, tw[::-1]], np.r_[self.wd_edge(tw, "upper"), self.wd_edge(tw, "lower")[::-1]]]))
        # giants: cooler than the end of the Hertzsprung gap, masses m_age .. M_sg
        sel = (L.m >= L.m_age) & (L.m <= self.m_sg)
        et, el = L.ehg[0][sel], L.ehg[1][sel]
        polys.append((GIANT, np.c_[np.r_[cold, et, et[-1], cold], np.r_[el[0], el, top, top]]))
        # subgiants: between the TAMS and the end of the gap, same masses
        tt_, tl_ = L.tams[0][sel], L.tams[1][sel]
        polys.append((SUBGIANT, np.c_[np.r_[tt_, et[::-1]], np.r_[tl_, el[::-1]]]))
        # bright giants: a band under the supergiant lower edge
        st, sl = self._sg_lower
        polys.append((BRIGHT_GIANT, np.c_[np.r_[st, st[::-1]], np.r_[sl - p.bright_giant_width, sl[::-1]]]))
        # supergiants: above the M_sg track, cooler than the TAMS of the more massive stars
        hi = L.m >= self.m_sg
        tat, tal = L.tams[0][hi], L.tams[1][hi]
        polys.append((SUPERGIANT, np.c_[np.r_[st, cold, tat[-1], tat[::-1]], np.r_[sl, top, top, tal[::-1]]]))
        # pre-main sequence: above the binary band (painted over it next), cooler than the oldest
        # subgiant/giant branch, hotter than the Hayashi line; the young-or-evolved zone is labelled
        # pre-main sequence only with young_prior > 0.5 (else it keeps its evolved label and the
        # classifier reports both)
        young, zone = self._pms_polygons()
        if young is not None:
            polys.append((PRE_MAIN_SEQUENCE, young))
        if zone is not None and p.young_prior > 0.5:
            polys.append(("young", zone))
        # main sequence, then the binary band
        lt_, ll_ = self._ms_lower
        ut_, ul_ = self._ms_top
        polys.append((MAIN_SEQUENCE, np.c_[np.r_[lt_, ut_[::-1]], np.r_[ll_, ul_[::-1]]]))
        band = np.c_[np.r_[ut_, ut_[::-1]], np.r_[ul_, ul_[::-1] + p.binary_offset]]
        polys.append(("binary", band))
        if self._hb_band is not None:
            ht, hlo, hhi = self._hb_band
            polys.append(("hb", np.c_[np.r_[ht, ht[::-1]], np.r_[hlo, hhi[::-1]]]))
        return polys

    def _paint(self):
        g = self.grid
        # painted in the interior of the padded lookup array (border: unclassified)
        padded = Lookup.padded_array(g, UNCLASSIFIED, np.int8)
        raw = padded[1:-1, 1:-1]
        pre_young = None  # coarse stage codes before the young-or-evolved zone is relabelled
        for code, poly in self._polygons():
            # painted strip by strip, on views of the raster, only where the polygon lies
            for (j0, j1, i0, i1), mask in fill_polygon_strips(poly, g):
                sub = raw[j0:j1, i0:i1]
                if code == "hb":
                    # core-He burning is long-lived, the gap crossing fast: giant where they overlap
                    mask &= (sub & RAW_STAGE) == SUBGIANT
                    np.copyto(sub, (sub & ~np.int8(RAW_STAGE)) | np.int8(GIANT | RAW_HB), where=mask)
                elif code == "young":
                    if pre_young is None:
                        fx, fy = self.mass_factor
                        pre_young = (raw[fy // 2 :: fy, fx // 2 :: fx] & RAW_STAGE).copy()
                    st_ = sub & RAW_STAGE
                    mask &= (st_ == SUBGIANT) | (st_ == GIANT)
                    np.copyto(sub, np.int8(PRE_MAIN_SEQUENCE), where=mask)
                elif code == "binary":
                    mask &= (sub & RAW_STAGE) != MAIN_SEQUENCE
                    if self.params.binary_promote:
                        np.bitwise_or(sub, np.int8(RAW_BINARY), out=sub, where=mask)
                    else:
                        np.copyto(sub, np.int8(MAIN_SEQUENCE | RAW_BINARY), where=mask)
                else:
                    np.copyto(sub, np.int8(code), where=mask)
        # main sequence cooler than the ZAMS of 0.1 Msun: extrapolated (the cool columns are the
        # first ones: centres ascend)
        tc, _ = g.centres()
        cool = raw[:, : int(np.count_nonzero(tc < self._logt_valid_min))]
        np.bitwise_or(cool, np.int8(RAW_EXTRAPOLATED), out=cool, where=(cool & RAW_STAGE) == MAIN_SEQUENCE)
        # main sequence brighter than the ZAMS of 100 Msun: extrapolated (the bright rows are the last)
        _, lc = g.centres()
        bright = raw[int(np.count_nonzero(lc <= self._logl_valid_max)) :, :]
        np.bitwise_or(bright, np.int8(RAW_EXTRAPOLATED), out=bright, where=(bright & RAW_STAGE) == MAIN_SEQUENCE)
        self.raw = Lookup.from_padded(padded, g)
        self._pre_young = pre_young
        # border: UNCLASSIFIED & RAW_STAGE == UNCLASSIFIED
        self.codes = Lookup.from_padded(np.bitwise_and(padded, np.int8(RAW_STAGE)), g)

    def _masses(self):
        """Coarse raster of the mass estimate of each cell, by the method of its stage."""
        L, g = self.loci, self.grid
        fx, fy = self.mass_factor
        cg = g.coarsen(fx, fy)
        ct, cl = cg.centres()
        # the cell-centre samples of the fine raster, contiguous (compared several times)
        codes = np.ascontiguousarray(self.codes.values[fy // 2 :: fy, fx // 2 :: fx][: cg.ny, : cg.nx])
        mass = np.full((cg.ny, cg.nx), np.nan, dtype=np.float32)
        m = L.m
        logm = np.log10(m)
        # cells of each stage (the track inversions are needed only there)
        is_ = {code: codes == code for code in (MAIN_SEQUENCE, SUBGIANT, GIANT, BRIGHT_GIANT, SUPERGIANT)}
        # main sequence
        tr_t, tr_l = L.ms_tracks(m)
        ms_raster = _invert_tracks(tr_t, tr_l, logm, cl, ct, need=is_[MAIN_SEQUENCE])
        # Hertzsprung gap
        ev = L.evolved & (m < 0.999 * self.m_fgb)
        hg_t, hg_l = L.hg_tracks(m[ev])
        hg_raster = _invert_tracks(hg_t, hg_l, logm[ev], cl, ct, need=is_[SUBGIANT])
        # giant branch / AGB (masses below M_FGB have a giant branch)
        gb = L.evolved & (m < 0.999 * self.m_fgb)
        gt, gl = L.giant_tracks(m[gb], logl_max=min(g.l1, 5.5))
        gb_raster = _invert_tracks(gt, gl, logm[gb], cl, ct, need=is_[GIANT] | is_[BRIGHT_GIANT])
        # supergiants: mean post-MS luminosity -> mass (monotone part above M_HeF)
        hi = (m >= self.m_hef) & np.isfinite(L.logl_post)
        lp = np.maximum.accumulate(L.logl_post[hi])
        sg_row = np.interp(cl, lp, logm[hi], left=np.nan, right=np.nan)
        sg_raster = np.broadcast_to(sg_row[:, None], mass.shape)
        # white dwarfs: radius from (T, L), then eq 91 inverted
        mw = np.linspace(0.1, 1.43, 400)
        rw = np.log10(hpt.wd_radius(mw))
        wk = np.flatnonzero(codes == WHITE_DWARF)  # evaluated in the white-dwarf cells only
        wr, wc = np.divmod(wk, cg.nx)
        logr = 0.5 * cl[wr] - 2.0 * (ct[wc] - LOG_TSUN)
        # (larger than eq 91 allows, the extremely-low-mass part: its lowest mass, 0.1 Msun)
        mass.reshape(-1)[wk] = np.interp(logr, rw[::-1], np.log10(mw)[::-1], left=np.nan, right=np.log10(mw[0]))
        for code, src in (
            (MAIN_SEQUENCE, ms_raster),
            (SUBGIANT, hg_raster),
            (GIANT, gb_raster),
            (BRIGHT_GIANT, gb_raster),
            (SUPERGIANT, sg_raster),
        ):
            sel = is_[code]
            mass[sel] = src[sel]
        # stripped massive stars (supergiants left of the main sequence): the post-MS luminosity-mass
        # relation of normal massive stars does not apply to helium stars: no mass
        mass[is_[SUPERGIANT] & self.stripped_massive(ct[None, :], cl[:, None])] = np.nan
        # bright giants without a giant-branch solution: luminosity relation
        fallback = is_[BRIGHT_GIANT] & ~np.isfinite(mass)
        mass[fallback] = sg_raster[fallback]
        # horizontal-branch cells: typical current mass of a ZAHB star of that Teff
        rawc = self.raw.values[fy // 2 :: fy, fx // 2 :: fx][: cg.ny, : cg.nx]
        hbc = (rawc & RAW_HB) != 0
        if hbc.any():
            hbm = np.log10(self._hb_mass(ct))
            mass[hbc] = np.broadcast_to(hbm[None, :], mass.shape)[hbc]
        self.mass_grid = cg
        # 10^x only where there is a mass (the power is elementwise; NaN stays NaN)
        padded = Lookup.padded_array(cg, np.nan, np.float32)
        have = np.isfinite(mass)
        padded[1:-1, 1:-1][have] = 10.0 ** mass[have]
        self.mass_lookup = Lookup.from_padded(padded, cg)

    #: the rasters kept in the on-disk cache: attribute, grid attribute, dtype
    _STORED = (("raw", "grid", np.int8), ("codes", "grid", np.int8), ("mass_lookup", "mass_grid", np.float32),
               ("free_run", "grid", np.uint8), ("young_zone", "mass_grid", np.int8))

    def _restore(self) -> bool:
        """Take the rasters from the on-disk cache (:mod:`._store`), memory-mapped; False if absent."""
        self.mass_grid = self.grid.coarsen(*self.mass_factor)
        got = {}
        for name, grid_name, dtype in self._STORED:
            g = getattr(self, grid_name)
            arr = _store.load(self._store, name, (g.ny + 2, g.nx + 2), dtype)
            if arr is None:
                return False
            got[name] = Lookup.from_padded(arr, g)
        self.__dict__.update(got)   # free_run included (a cached_property: set directly)
        return True

    def _keep(self) -> None:
        """Store the rasters just built and use the stored copies (memory-mapped) from now on."""
        if self._store is None:
            return
        self.__dict__["free_run"] = self._free_run_lookup()
        for name, grid_name, _ in self._STORED:
            lk = getattr(self, name)
            padded = lk.flat.reshape(lk.values.shape[0] + 2, lk.width)
            self.__dict__[name] = Lookup.from_padded(_store.save(self._store, name, padded), getattr(self, grid_name))

    def stored(self, name: str, build):
        """An array derived from this map's rasters, kept in the on-disk cache next to them:
        ``build(self)`` on the first use (then stored), memory-mapped from the cache afterwards."""
        arr = _store.load(self._store, name)
        if arr is None:
            arr = _store.save(self._store, name, np.ascontiguousarray(build(self)))
        return arr

    def release_pages(self) -> None:
        """Drop this process's resident pages of the rasters mapped from the on-disk cache (they
        stay in the system's page cache and come back on the next lookup): a run that goes through
        many maps then holds the pages of one map at a time, not of all of them."""
        for name, _, _ in self._STORED:
            lk = self.__dict__.get(name)
            if lk is not None:
                _store.release(lk.flat)
        for arr in (getattr(self, "_mc_uniform", None) or ())[:2]:
            _store.release(arr)

    def _relations(self):
        L = self.loci
        m = L.m
        logm = np.log10(m)
        # 1-D relations along the ZAMS
        self._zams_logt = L.zams[0]
        self._zams_logl = L.zams[1]
        self._logm = logm
        self._logm_of_logt = PiecewiseLinear(self._zams_logt, logm)
        self._logm_of_logl = PiecewiseLinear(self._zams_logl, logm)

    @functools.cached_property
    def _ms_top_at(self):
        """log L of the main-sequence upper edge as a function of log T (built on first use: its
        bucket table costs start-up to every map, and no classification needs it)."""
        return PiecewiseLinear(*self._ms_top)

    def _young_zone_lookup(self):
        """Coarse lookup (mass grid, int8) of the young-or-evolved zone: in the zone, the evolved
        label of the cell (subgiant or giant code), elsewhere -1."""
        g = self.grid
        fx, fy = self.mass_factor
        cg = g.coarsen(fx, fy)
        padded = Lookup.padded_array(cg, -1, np.int8)
        _, zone = self._pms_polygons()
        if zone is not None:
            inner = padded[1:-1, 1:-1]
            evolved = self._pre_young
            if evolved is None:
                evolved = self.codes.values[fy // 2 :: fy, fx // 2 :: fx][: cg.ny, : cg.nx]
            evolved = evolved[: cg.ny, : cg.nx]
            for (j0, j1, i0, i1), mask in fill_polygon_strips(zone, cg):
                e = evolved[j0:j1, i0:i1]
                mask &= (e == SUBGIANT) | (e == GIANT)
                np.copyto(inner[j0:j1, i0:i1], e, where=mask)
        self._pre_young = None
        self.young_zone = Lookup.from_padded(padded, cg)

    # ------------------------------------------------------------------ public interface
    def locate(self, logt, logl) -> np.ndarray:
        """Stage codes (int8, ``hrstage.stages``) of positions; NaN/out-of-map -> unclassified."""
        return self.codes(logt, logl)

    def locate_raw(self, logt, logl) -> np.ndarray:
        """Raw raster codes: stage code | RAW_BINARY | RAW_EXTRAPOLATED."""
        return self.raw(logt, logl)

    def mass_at(self, logt, logl) -> np.ndarray:
        """Mass estimate (Msun) of the cell each position falls in, by its stage's method."""
        return self.mass_lookup(logt, logl).astype(float)

    #: unit (cells) of the same-stage run lengths stored in :attr:`free_run`
    FREE_RUN_UNIT = 8

    @functools.cached_property
    def free_run(self) -> Lookup:
        """Lookup (uint8, same grid as :attr:`codes`) of how far a cell's stage extends along each
        axis: low 4 bits ``kx``, high 4 bits ``ky``, such that every cell within ``FREE_RUN_UNIT *
        kx`` cells left and right of it (``FREE_RUN_UNIT * ky`` up and down) has its stage code
        (capped at 15 units; the raster edge counts as a change; the border gets 0). A probe of
        fewer cells than that cannot change the label, so it need not be looked up.
        """
        return self._free_run_lookup()

    def _free_run_lookup(self) -> Lookup:
        padded = Lookup.padded_array(self.grid, 0, np.uint8)
        run_levels(self.codes.values, self.FREE_RUN_UNIT, 15, out=padded[1:-1, 1:-1])
        return Lookup.from_padded(padded, self.grid)

    @functools.cached_property
    def _ms_top_columns(self):
        """:meth:`_ms_top_crossings`, kept in the on-disk cache with the rasters."""
        return self.stored("ms_top_columns", StageMap._ms_top_crossings)

    def _ms_top_crossings(self):
        """Crossings of the main-sequence upper edge with the vertical line through the centre of
        every raster column: (nx, K) log L values, ascending, NaN-padded.

        The upper edge is not a function of log Teff: it turns back to cooler Teff above ~20 Msun
        and folds where the low-mass edge is moved to the cool side, so a vertical line can cross
        it two or three times. The unresolved-binary band is the edge shifted up by
        ``binary_offset`` and filled by cell centres, so a cell is in the band exactly when one
        crossing lies at most ``binary_offset`` below its centre.
        """
        ut, ul = self._ms_top
        tc, _ = self.grid.centres()
        xa, xb, ya, yb = ut[:-1], ut[1:], ul[:-1], ul[1:]
        lo, hi = np.minimum(xa, xb), np.maximum(xa, xb)
        # half-open in log T so that a vertex shared by two segments is counted once
        hit = (tc[:, None] >= lo[None, :]) & (tc[:, None] < hi[None, :])
        f = (tc[:, None] - xa[None, :]) / np.where(xb != xa, xb - xa, np.inf)[None, :]
        cross = np.where(hit, ya[None, :] + f * (yb - ya)[None, :], np.nan)
        cross.sort(axis=1)  # NaN last
        k = max(1, int(hit.sum(axis=1).max()))
        return np.ascontiguousarray(cross[:, :k])   # not a view that would keep the (nx, segments) array

    def binary_band_height(self, logt, logl) -> np.ndarray:
        """Height (dex) of positions above the main-sequence upper edge, measured as the
        unresolved-binary band is built.

        For each position: log L minus the nearest crossing of the upper edge that lies below it
        on the vertical line through the centre of its raster column (the band is filled by cell
        centres, so a crossing up to one cell above the position counts, and the height is then
        0). NaN where no crossing of that column lies below. Positions in the band
        (``RAW_BINARY``) get 0 .. ``binary_offset`` (plus up to one cell).
        """
        logt = np.asarray(logt, dtype=float)
        logl = np.asarray(logl, dtype=float)
        cols = self._ms_top_columns
        g = self.grid
        i = np.floor((logt - g.t0) / g.dt)
        ok = np.isfinite(i) & (i >= 0) & (i < g.nx)
        ic = np.where(ok, i, 0).astype(np.intp)
        h = logl[..., None] - cols[ic]
        h = np.where(h >= -g.dl, h, np.inf)  # crossings above the position (beyond a cell) do not count
        h = np.min(h, axis=-1, initial=np.inf)
        h = np.where(ok & np.isfinite(h), np.maximum(h, 0.0), np.nan)
        return h

    def ms_mass_from_logt(self, logt) -> np.ndarray:
        """ZAMS mass (Msun) of the same Teff (NaN outside the 0.1-100 Msun ZAMS)."""
        return 10.0 ** self._logm_of_logt(logt)

    def ms_mass_from_logl(self, logl) -> np.ndarray:
        """ZAMS mass (Msun) of the same luminosity (NaN outside the 0.1-100 Msun ZAMS)."""
        return 10.0 ** self._logm_of_logl(logl)

    @functools.cached_property
    def curves(self) -> dict:
        """The loci and region edges as :class:`Curve` objects, keyed by name."""
        L, p = self.loci, self.params
        m = L.m
        nan = np.full_like(m, np.nan)
        ev = L.evolved
        out = {}

        def add(name, label, t, l, mass):
            out[name] = Curve(name, label, np.asarray(t, float), np.asarray(l, float), np.asarray(mass, float))

        add("zams", "ZAMS (Tout et al. 1996)", *L.zams, m)
        lt, ll = self._ms_lower
        add("ms_lower", f"Main-sequence lower edge (ZAMS - {p.ms_below_zams:g} dex, +{p.ms_hot_logt:g} dex in log T)", lt, ll,
            np.r_[np.full(len(lt) - len(m), np.nan), m])
        ut, ul = self._ms_top
        mu = np.r_[np.full(len(ut) - len(m), np.nan), m]
        add("ms_upper", f"Main-sequence upper edge (TAMS, or position at {p.max_age_myr / 1e3:g} Gyr)", ut, ul, mu)
        add("binary_upper", f"Unresolved-binary band top (+{p.binary_offset:g} dex)", ut, ul + p.binary_offset, mu)
        add("tams", "TAMS (HPT2000 eqs 8-9)", L.tams[0][ev], L.tams[1][ev], m[ev])
        gb = ev & L.below_fgb
        add("bgb", "Base of the giant branch (HPT2000 eqs 10, 46)", L.bgb[0][gb], L.bgb[1][gb], m[gb])
        add("ehg", "End of the Hertzsprung gap", L.ehg[0][ev], L.ehg[1][ev], m[ev])
        # He ignition with a NaN row at the M_FGB jump
        ht, hl, hm = L.hei[0][ev], L.hei[1][ev], m[ev]
        j = np.searchsorted(hm, self.m_fgb)
        add("hei", "He ignition / giant-branch tip (HPT2000 eqs 49-50)",
            np.insert(ht, j, np.nan), np.insert(hl, j, np.nan), np.insert(hm, j, np.nan))
        add("giant_tip", "Giant-branch tip (He ignition below M_FGB)", ht[hm < self.m_fgb], hl[hm < self.m_fgb], hm[hm < self.m_fgb])
        sub = ev & (m <= self.m_sg)
        add("agb", "AGB radius (HPT2000 eq 74) at the He-ignition luminosity", L.agb[0][sub], L.agb[1][sub], m[sub])
        st, sl = self._sg_lower
        add("sg_lower", f"Supergiant lower edge (track of {self.m_sg:.2f} Msun)", st, sl, np.full_like(st, self.m_sg))
        add("bg_lower", f"Bright-giant lower edge (-{p.bright_giant_width:g} dex)", st, sl - p.bright_giant_width,
            np.full_like(st, self.m_sg))
        tw = np.linspace(self._logt_wd_min, self.grid.t1, 50)
        add("wd_min", f"White-dwarf band lower edge ({p.wd_mass_max:g} Msun, -{p.wd_tolerance:g} dex)",
            tw, self.wd_edge(tw, "lower"), np.full_like(tw, p.wd_mass_max))
        tw = np.unique(np.r_[tw, LOGT_WD_HOT])
        add("wd_max", f"White-dwarf band upper edge ({p.wd_mass_min:g} Msun, +{p.wd_tolerance + p.wd_envelope_tolerance:g} dex, "
            f"+{p.wd_hot_tolerance:g} dex more from 30 kK to 100 kK; below {p.hot_subdwarf_teff[0]:g} K at least "
            f"log g {p.wd_elm_logg:g}, extremely-low-mass white dwarfs)",
            tw, self.wd_edge(tw, "upper"), np.full_like(tw, p.wd_mass_min))
        ot, ol = self._old_branch
        add("old_branch", f"Subgiant and giant branch of the oldest stars ({self.m_age:.2f} Msun at "
            f"{p.max_age_myr / 1e3:g} Gyr; giant branch -{p.pms_rgb_margin:g} dex in log T)", ot, ol,
            np.full_like(ot, self.m_age))
        ht_, hl_ = self._hayashi
        add("hayashi", f"Hayashi line of {HAYASHI_MASS:g} Msun (HPT2000 eq 46, -{p.pms_hayashi_logt:g} dex in log T)",
            ht_, hl_, np.full_like(ht_, HAYASHI_MASS))
        zt, zl, zm = L.zahb_ref
        add("zahb", f"Zero-age horizontal branch of {L.zahb_minit[0]:.2f} Msun stars (HPT2000 eqs 53-54)",
            zt, zl, zm)
        if self._hb_band is not None:
            ht, hlo, hhi = self._hb_band
            hm = self._hb_mass(ht)
            add("hb_lower", f"Core-He-burning band lower edge (ZAHB - {p.hb_depth:g} dex)", ht, hlo, hm)
            add("hb_upper", f"Core-He-burning band upper edge (ZAHB + {p.hb_height:g} dex)", ht, hhi, hm)
        del nan
        return out

    @property
    def regions(self) -> dict:
        """Closed outlines (K, 2) in (log Teff, log L) of each stage's region, traced on the raster.

        Traced from the same raster :meth:`locate` uses (at half its resolution), so what is drawn
        is what is classified. Holes, if any, are listed in :attr:`region_holes`.
        """
        if self._regions is None:
            self._trace()
        return self._regions

    @property
    def region_holes(self) -> dict:
        """Inner rings (holes) of the regions, same layout as :attr:`regions`."""
        if self._regions is None:
            self._trace()
        return self._holes

    def _trace(self):
        import contourpy

        g = self.grid
        step = 2
        codes = self.codes.values[::step, ::step]
        tc, lc = g.centres()
        tc, lc = tc[::step], lc[::step]
        self._regions, self._holes = {}, {}
        for name in STAGES:
            if name == "unclassified":
                continue
            k = CODE[name]
            z = np.zeros((codes.shape[0] + 2, codes.shape[1] + 2))
            z[1:-1, 1:-1] = codes == k
            x = np.r_[tc[0] - g.dt * step, tc, tc[-1] + g.dt * step]
            y = np.r_[lc[0] - g.dl * step, lc, lc[-1] + g.dl * step]
            gen = contourpy.contour_generator(x, y, z, fill_type="OuterOffset")
            pts, offs = gen.filled(0.5, 1.5)
            outer, holes = [], []
            for p, o in zip(pts, offs):
                rings = [p[o[i] : o[i + 1]] for i in range(len(o) - 1)]
                outer.append(rings[0])
                holes.extend(rings[1:])
            self._regions[name] = outer
            self._holes[name] = holes

    def distance_to_boundaries(self, logt, logl, names=None) -> dict:
        """Signed distances of positions to each curve.

        Returns ``{name: (dlogl, dlogt)}``: ``dlogl`` is log L of the position minus that of the
        nearest crossing of the curve with the vertical line through it (positive: above), and
        ``dlogt`` the same along the horizontal line (positive: hotter); NaN where the curve does
        not reach that Teff / L. Costs (stars x curve points): meant for explanations and small
        sets, not whole catalogues.
        """
        logt = np.atleast_1d(np.asarray(logt, float))
        logl = np.atleast_1d(np.asarray(logl, float))
        out = {}
        for name, c in self.curves.items():
            if names is not None and name not in names:
                continue
            out[name] = (_cross(c.logt, c.logl, logt, logl), _cross(c.logl, c.logt, logl, logt))
        return out

    def to_table(self):
        """All curves in long format (curve, mass, logt, logl) with metadata, as an astropy Table."""
        from astropy.table import Table

        rows = {"curve": [], "mass": [], "logt": [], "logl": []}
        for name, c in self.curves.items():
            ok = np.isfinite(c.logt) & np.isfinite(c.logl)
            rows["curve"] += [name] * int(ok.sum())
            rows["mass"].append(c.mass[ok])
            rows["logt"].append(c.logt[ok])
            rows["logl"].append(c.logl[ok])
        t = Table(
            {
                "curve": np.array(rows["curve"], dtype=str),
                "mass": np.concatenate(rows["mass"]),
                "logt": np.concatenate(rows["logt"]),
                "logl": np.concatenate(rows["logl"]),
            }
        )
        t["mass"].unit = "solMass"
        t["logt"].unit = "dex(K)"
        t["logl"].unit = "dex(solLum)"
        t["mass"].description = "Initial mass of the point (NaN for extrapolated points)"
        t["logt"].description = "log10 effective temperature"
        t["logl"].description = "log10 luminosity"
        t.meta.update(
            {
                "feh": self.feh,
                "z": self.z,
                "z_clipped": self.z_clipped,
                "z_held": self.z_held,
                "m_hef": self.m_hef,
                "m_fgb": self.m_fgb,
                "supergiant_mass": self.m_sg,
                "age_limit_mass": self.m_age,
                "params": self.params.as_dict(),
                "curve_labels": {n: c.label for n, c in self.curves.items()},
                "citations": list(CITATIONS),
                "note": "Indicative boundaries from analytic fits to single-star models; not a "
                "substitute for a spectroscopic analysis.",
            }
        )
        return t

    def __repr__(self):
        return (
            f"StageMap(feh={self.feh:+.3f}, z={self.z:.5f}{' clipped' if self.z_clipped else ''}, "
            f"M_sg={self.m_sg:.2f}, M_FGB={self.m_fgb:.2f}, age-limit mass={self.m_age:.3f})"
        )


def _cross(xc, yc, x, y):
    """Signed y - y_curve at the crossing of the curve with the line X = x nearest to y."""
    xa, xb = xc[:-1], xc[1:]
    ya, yb = yc[:-1], yc[1:]
    ok = np.isfinite(xa) & np.isfinite(xb) & np.isfinite(ya) & np.isfinite(yb) & (xa != xb)
    xa, xb, ya, yb = xa[ok], xb[ok], ya[ok], yb[ok]
    out = np.full(x.shape, np.nan)
    for s in range(0, len(x), 2048):
        xs, ys = x[s : s + 2048, None], y[s : s + 2048, None]
        f = (xs - xa) / (xb - xa)
        inside = (f >= 0) & (f <= 1)
        yy = ya + f * (yb - ya)
        d = np.where(inside, ys - yy, np.inf)
        i = np.argmin(np.abs(d), axis=1)
        best = d[np.arange(len(i)), i]
        out[s : s + 2048] = np.where(np.isfinite(best), best, np.nan)
    return out


#: maps the cache of :func:`stage_map` holds (least recently used ones are dropped beyond)
CACHE_SIZE = 24


@functools.lru_cache(maxsize=CACHE_SIZE)
def _cached(feh_key: float, params: StageParams) -> StageMap:
    return StageMap(feh_key, params)


def _key(feh, params: dict):
    """Cache key (rounded [Fe/H], StageParams) of a stage_map call, with its argument checks."""
    params = dict(params)
    if "params" in params:
        sp = params.pop("params")
        if params:
            raise HrstageInputError("stage_map: give either params=StageParams(...) or keywords, not both")
        if not isinstance(sp, StageParams):
            raise HrstageInputError("stage_map: params must be a StageParams")
    else:
        sp = StageParams.from_kwargs(**params)
    try:
        feh = float(feh)
    except (TypeError, ValueError):
        raise HrstageInputError(f"stage map: [Fe/H]={feh!r} is not a number") from None
    if not np.isfinite(feh):
        raise HrstageInputError(f"stage map: [Fe/H]={feh!r} is not a finite number")
    return round(feh, 3), sp


def stage_map(feh: float = 0.0, **params) -> StageMap:
    """The (cached) stage map for [Fe/H] ``feh`` (rounded to 0.001 dex) and stage parameters.

    Parameters
    ----------
    feh : float
        [Fe/H] in dex; Z = 0.02 x 10^feh in the fits' scale, clipped to 1e-4..0.03 (up to
        [Fe/H] = +0.5 the Z = 0.03 boundaries are a checked treatment, ``z_held``; beyond, the map
        says ``z_clipped``).
    **params
        Any field of :class:`StageParams`; or ``params=StageParams(...)``.
    """
    return _cached(*_key(feh, params))


def _build_with_free_run(key) -> StageMap:
    sm = _cached(*key)
    if "free_run" not in sm.__dict__:
        # set directly: the cached_property of Python < 3.12 computes under one lock shared by
        # all instances, which would serialise the threads
        sm.__dict__["free_run"] = sm._free_run_lookup()
    return sm


def prebuild(fehs, workers: int = 2, **params) -> list:
    """Build (and cache) the stage maps of several metallicities at once, ``free_run`` included.

    The same maps :func:`stage_map` returns (same rounding and parameters, same cache); each
    distinct map is built once. ``workers`` threads build different maps concurrently (numpy
    releases the interpreter lock in its larger loops): on an otherwise idle 2-core machine 12
    maps took ~1.15 s with 2 threads against ~1.55 s one after another (median of 6, same
    run); on cores busy with other work threads gain nothing and can be slower, so pass
    ``workers=1`` there. Results are identical either way. At most :data:`CACHE_SIZE` maps stay
    cached; the returned list (one map per entry of ``fehs``, in order) holds them all.

    Parameters
    ----------
    fehs : iterable of float
        [Fe/H] values (dex).
    workers : int
        Threads (1: one map after another in the calling thread).
    **params
        As for :func:`stage_map`.
    """
    keys = [_key(f, params) for f in np.atleast_1d(np.asarray(fehs, dtype=object)).tolist()]
    workers = int(workers)
    if workers < 1:
        raise HrstageInputError(f"prebuild: workers={workers} must be at least 1")
    todo = list(dict.fromkeys(keys))
    if workers == 1 or len(todo) < 2:
        built = {k: _build_with_free_run(k) for k in todo}
    else:
        from concurrent.futures import ThreadPoolExecutor

        with ThreadPoolExecutor(max_workers=min(workers, len(todo))) as pool:
            built = dict(zip(todo, pool.map(_build_with_free_run, todo)))
    return [built[k] for k in keys]
