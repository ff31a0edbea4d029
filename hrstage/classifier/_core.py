"""Vectorised stage classification of (log Teff, log L) positions (layer 3).

Labels come from the raster of :mod:`hrstage.stagemap`; probabilities from a seeded Monte Carlo
over the (optionally correlated) input errors with common random numbers; masses from the mass
raster (method per stage) or the supplied mass; flags with readable reasons.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .. import flags as F
from ..errors import HrstageInputError
from ..models.metallicity import Z_MAX, Z_MIN, feh_from_z
from ..stages import (
    BRIGHT_GIANT,
    GIANT,
    LABELS,
    MAIN_SEQUENCE,
    STAGES,
    SUBGIANT,
    SUPERGIANT,
    UNCLASSIFIED,
)
from ..stagemap import MASS_METHODS, RAW_BINARY, RAW_EXTRAPOLATED, RAW_HB, RAW_STAGE, StageParams, stage_map
from ..stagemap._map import _interp_monotone

N_STAGES = len(STAGES)

#: [Fe/H] grid for per-star metallicities: 0.25 dex steps inside the fits' range
#: (Z = 1e-4 .. 0.03, i.e. [Fe/H] = -2.30 .. +0.18 on the fits' Z_sun = 0.02 scale), plus both ends.
FEH_GRID = np.unique(
    np.round(np.r_[float(feh_from_z(Z_MIN)), np.arange(-2.25, 0.01, 0.25), float(feh_from_z(Z_MAX))], 4)
)

#: classifier options (not stage-map geometry) and their defaults
OPTIONS = {
    "cool_teff": 7000.0,          # K: "cool" for the cool-but-massive test
    "cool_massive_ratio": 2.0,    # mass ratio above which a cool star is "too massive"
    "near_logt": 0.005,           # dex: boundary proximity probe without errors
    "near_logl": 0.02,            # dex
    "low_probability": 0.6,       # stage_prob below this sets LOW_PROBABILITY
    "mass_check_ratio": 2.0,      # supplied vs position mass disagreement noted in the reason
}

_BASE_REASON = {
    "main_sequence": "between the main-sequence lower edge (ZAMS) and upper edge (TAMS / {age} Gyr position)",
    "subgiant": "between the TAMS and the end of the Hertzsprung gap (base of the giant branch)",
    "giant": "cooler than the end of the Hertzsprung gap, below the bright-giant band",
    "bright_giant": "in the band {bgw} dex under the supergiant lower edge ({msg:.1f} Msun track)",
    "supergiant": "above the post-main-sequence track of {msg:.1f} Msun",
    "white_dwarf": "in the white-dwarf band ({wmin:g}-{wmax:g} Msun radius lines)",
    "subdwarf": "below the main-sequence lower edge, above the white-dwarf band",
    "hot_subdwarf": "Teff {hlo:.0f}-{hhi:.0f} K between the white-dwarf band and the ZAMS",
    "unclassified": "outside every stage region",
}

#: reason of a giant label from the core-helium-burning band (where it overlaps the Hertzsprung gap)
_HB_REASON = (
    "Giant: core-helium burning (horizontal branch / red clump), between {dep:g} dex under and {hgt:g} dex "
    "over the zero-age horizontal branch (HPT2000 eq 53), inside the Hertzsprung gap of the fits; a star "
    "spends ~100 Myr burning helium here but crosses the gap in a few Myr, so it is far more likely a "
    "horizontal-branch star than a crossing subgiant"
)

#: mass method of a giant in the core-helium-burning band
HB_MASS_METHOD = "horizontal_branch"


def _split_params(params: dict):
    sp_names = set(StageParams.names())
    stage_kw = {k: v for k, v in params.items() if k in sp_names}
    opts = dict(OPTIONS)
    unknown = []
    for k, v in params.items():
        if k in sp_names:
            continue
        if k in OPTIONS:
            opts[k] = float(v)
        else:
            unknown.append(k)
    if unknown:
        raise HrstageInputError(
            f"unknown option(s) {', '.join(sorted(unknown))}; stage parameters: {', '.join(sorted(sp_names))}; "
            f"classifier options: {', '.join(OPTIONS)}"
        )
    return stage_kw, opts


def _as_array(x, name, shape=None):
    if x is None:
        return None
    try:
        a = np.asarray(x, dtype=float)
    except (TypeError, ValueError):
        raise HrstageInputError(f"{name}: expected numbers, got {type(x).__name__}") from None
    return a


@dataclass
class ClassificationResult:
    """Per-star outcome of :func:`classify_hr` (all arrays of length N, in input order).

    Attributes
    ----------
    stage : ndarray of str
    code : ndarray of int8 (``hrstage.stages`` codes)
    proba : ndarray (N, len(STAGES)), probability per stage (one-hot without Monte Carlo)
    stage_prob : ndarray, probability of the assigned stage
    mass, mass_err : ndarray (Msun); mass_method : ndarray of str
    mass_ms_teff, mass_ms_lum : ndarray (Msun), ZAMS masses of the same Teff / the same L
    flags : ndarray of int64 (``hrstage.flags`` bits)
    reason : ndarray of object (readable text with the numbers; built on first access)
    """

    logt: np.ndarray
    logl: np.ndarray
    logt_err: np.ndarray
    logl_err: np.ndarray
    corr: np.ndarray
    feh_used: np.ndarray
    code: np.ndarray
    proba: np.ndarray
    mass: np.ndarray
    mass_err: np.ndarray
    mass_method: np.ndarray
    mass_ms_teff: np.ndarray
    mass_ms_lum: np.ndarray
    flags: np.ndarray
    n_draws: int
    _notes: dict = field(default_factory=dict, repr=False)
    _base: np.ndarray | None = field(default=None, repr=False)
    _reason: np.ndarray | None = field(default=None, repr=False)
    _flag_text: np.ndarray | None = field(default=None, repr=False)

    def __len__(self):
        return len(self.code)

    @property
    def stage(self) -> np.ndarray:
        return np.asarray(STAGES, dtype=object)[self.code].astype(str)

    @property
    def stage_prob(self) -> np.ndarray:
        return self.proba[np.arange(len(self.code)), self.code.astype(np.intp)]

    def _build_text(self):
        n = len(self.code)
        ft = np.full(n, "", dtype=object)
        for key in sorted(self._notes):
            idx, texts = self._notes[key]
            if callable(texts):
                texts = texts(idx)
            for i, t in zip(idx, texts):
                ft[i] = t if not ft[i] else ft[i] + "; " + t
        self._flag_text = ft
        base = self._base if self._base is not None else np.full(n, "", dtype=object)
        reason = base.copy()
        has = ft != ""
        reason[has] = base[has] + "; " + ft[has]
        self._reason = reason

    @property
    def flag_text(self) -> np.ndarray:
        """Readable reasons behind the flags (empty where no flag is set)."""
        if self._flag_text is None:
            self._build_text()
        return self._flag_text

    @property
    def reason(self) -> np.ndarray:
        """The stage's region and every flag reason, with the numbers."""
        if self._reason is None:
            self._build_text()
        return self._reason

    def to_columns(self) -> dict:
        """Columns named as ``hrstage.columns.CLASSIFY_COLUMNS`` (all but ``hr_source``)."""
        out = {"stage": self.stage, "stage_prob": self.stage_prob}
        for k, s in enumerate(STAGES):
            out[f"prob_{s}"] = self.proba[:, k]
        out.update(
            {
                "mass_est": self.mass,
                "mass_err": self.mass_err,
                "mass_method": self.mass_method.astype(str),
                "mass_ms_teff": self.mass_ms_teff,
                "mass_ms_lum": self.mass_ms_lum,
                "teff_used": 10.0**self.logt,
                "logl_used": self.logl,
                "logt_err": self.logt_err,
                "logl_err": self.logl_err,
                "logt_logl_corr": self.corr,
                "feh_used": self.feh_used,
                "flags": self.flags.astype(np.int64),
                "flag_text": self.flag_text.astype(str),
            }
        )
        return out


def _note(notes, key, idx, texts):
    """Record reason texts for rows ``idx``: a list, or a callable ``texts(idx) -> list`` that is
    called only when the texts are first needed (``reason`` / ``flag_text`` / ``to_columns``)."""
    if len(idx):
        notes[key] = (np.asarray(idx), texts if callable(texts) else list(texts))


def _draws(n_draws: int, seed):
    rng = np.random.default_rng(seed)
    z = rng.standard_normal((2, n_draws))
    return z[0].astype(np.float32), z[1].astype(np.float32)


def _pack_lut():
    raw = np.arange(128)
    stage = raw & RAW_STAGE
    lut = np.where(stage < 8, np.left_shift(np.uint64(1), (8 * np.minimum(stage, 7)).astype(np.uint64)), np.uint64(0))
    return lut.astype(np.uint64)


_PACK = _pack_lut()
_SHIFTS = (8 * np.arange(8)).astype(np.uint64)

#: side (cells) of the blocks of the region-uniform raster used to skip draws
UNIFORM_BLOCK = 16


def _uniform_tables(sm):
    """Per map (cached on it): block codes (-1 where a block holds more than one stage) and, per
    stage, the summed-area table of "block uniform with this stage" over the block grid."""
    tab = getattr(sm, "_mc_uniform", None)
    if tab is not None:
        return tab
    codes = sm.codes.values  # (ny, nx) stage codes, unpadded
    k = UNIFORM_BLOCK
    ny, nx = codes.shape
    by, bx = -(-ny // k), -(-nx // k)
    pad = np.full((by * k, bx * k), UNCLASSIFIED, dtype=np.int8)
    pad[:ny, :nx] = codes
    blocks = pad.reshape(by, k, bx, k)
    lo = blocks.min(axis=(1, 3))
    hi = blocks.max(axis=(1, 3))
    bcode = np.where(lo == hi, lo, -1).astype(np.int8)
    sat = np.zeros((N_STAGES, by + 1, bx + 1), dtype=np.int32)
    for c in range(N_STAGES):
        sat[c, 1:, 1:] = np.cumsum(np.cumsum(bcode == c, axis=0, dtype=np.int32), axis=1, dtype=np.int32)
    tab = (bcode, sat.reshape(-1), by, bx)
    sm._mc_uniform = tab
    return tab


def _uniform_boxes(sm, xc, yc, ex, ey):
    """Stage code of stars whose whole draw box lies in one stage, -1 for the others.

    ``xc, yc``: unpadded fractional cell coordinates of the centres; ``ex, ey``: half-widths (cells)
    of the box that holds every draw (from the extreme values of the common random numbers), so
    that a skipped star gets exactly the counts the draws would give.
    """
    bcode, sat, by, bx = _uniform_tables(sm)
    g = sm.grid
    k = UNIFORM_BLOCK
    x0, x1 = xc - ex, xc + ex
    y0, y1 = yc - ey, yc + ey
    inside = (x0 >= 0) & (y0 >= 0) & (x1 < g.nx) & (y1 < g.ny)
    out = np.full(len(xc), -1, dtype=np.int8)
    if not inside.any():
        return out, inside
    i = np.nonzero(inside)[0]
    bx0 = x0[i].astype(np.int64) // k
    bx1 = x1[i].astype(np.int64) // k + 1
    by0 = y0[i].astype(np.int64) // k
    by1 = y1[i].astype(np.int64) // k + 1
    c = bcode[by0, bx0].astype(np.int64)
    ok = c >= 0
    cc = np.where(ok, c, 0)
    w1 = bx + 1
    base = cc * (by + 1) * w1
    tot = sat[base + by1 * w1 + bx1] - sat[base + by0 * w1 + bx1] - sat[base + by1 * w1 + bx0] + sat[base + by0 * w1 + bx0]
    full = ok & (tot == (by1 - by0) * (bx1 - bx0))
    out[i[full]] = c[full].astype(np.int8)
    return out, inside


def _mc_counts(sm, logt, logl, st, sl, rho, z1, z2, chunk=1 << 16):
    """Counts per stage (N, N_STAGES) of the draws, common random numbers z1, z2.

    Stars whose whole draw box (the extreme z1, z2 of the call scaled by their errors) lies in
    blocks of a single stage get all draws in that stage without drawing (exact). The others are
    drawn in chunks of about ``chunk`` star-draws in float32 index arithmetic on the flattened
    stage raster; the stages are counted with a packed one-hot table (8 bits per stage, at most
    255 draws per pass) summed over the draws of each star.
    """
    lk = sm.codes
    n, d = len(logt), len(z1)
    counts = np.zeros((n, N_STAGES), dtype=np.int64)
    if n == 0 or d == 0:
        return counts
    xc = logt * lk.inv_dt + (lk.ax - 1.0)  # unpadded fractional cell coordinates
    yc = logl * lk.inv_dl + (lk.ay - 1.0)
    sx = st * lk.inv_dt
    sya = sl * rho * lk.inv_dl
    syb = sl * np.sqrt(np.clip(1 - rho * rho, 0, 1)) * lk.inv_dl
    z1m = float(np.max(np.abs(z1)))
    z2m = float(np.max(np.abs(z2)))
    ex = sx * z1m + 1.0  # one cell of slack for float32 rounding of the drawn positions
    ey = np.abs(sya) * z1m + syb * z2m + 1.0
    uni, inside = _uniform_boxes(sm, xc, yc, ex, ey)
    done = uni >= 0
    counts[np.nonzero(done)[0], uni[done].astype(np.intp)] = d
    # boxes inside the raster need no clipping of the drawn positions
    for todo, clip in ((np.nonzero(~done & inside)[0], False), (np.nonzero(~done & ~inside)[0], True)):
        if len(todo):
            _draw_counts(lk, counts, todo, xc, yc, sx, sya, syb, z1, z2, chunk, clip)
    return counts


def _draw_counts(lk, counts, todo, xc, yc, sx, sya, syb, z1, z2, chunk, clip):
    """Counts of the drawn stars ``todo`` (see :func:`_mc_counts`), written into ``counts``."""
    f32 = np.float32
    d = len(z1)
    xmax, ymax = f32(lk.xmax), f32(lk.ymax)
    w = np.int32(lk.width)
    flat = lk.flat
    rows = max(1, chunk // d)
    xp = (xc[todo] + 1.0).astype(f32)  # padded coordinates
    yp = (yc[todo] + 1.0).astype(f32)
    sxt, syat, sybt = sx[todo].astype(f32), sya[todo].astype(f32), syb[todo].astype(f32)
    for s in range(0, len(todo), rows):
        e = min(len(todo), s + rows)
        sub_total = np.zeros((e - s, 8), dtype=np.int64)
        for b in range(0, d, 255):
            zz1, zz2 = z1[None, b : b + 255], z2[None, b : b + 255]
            x = sxt[s:e, None] * zz1
            x += xp[s:e, None]
            if clip:  # fmax/fmin send NaN to the border as well (np.clip would keep it)
                np.fmax(x, 0, out=x)
                np.fmin(x, xmax, out=x)
            y = syat[s:e, None] * zz1
            y += sybt[s:e, None] * zz2
            y += yp[s:e, None]
            if clip:
                np.fmax(y, 0, out=y)
                np.fmin(y, ymax, out=y)
            idx = y.astype(np.int32)
            idx *= w
            idx += x.astype(np.int32)
            acc = _PACK.take(flat.take(idx)).sum(axis=1, dtype=np.uint64)
            sub_total += ((acc[:, None] >> _SHIFTS[None, :]) & np.uint64(255)).astype(np.int64)
        rr = todo[s:e]
        counts[rr, :8] = sub_total
        counts[rr, 8] = d - sub_total.sum(axis=1)


def _group_feh(feh, n):
    """Metallicity per star -> (feh_used per star, groups {feh: index array}, no_feh mask, scalar?)."""
    if feh is None:
        return np.zeros(n), {0.0: np.arange(n)}, np.ones(n, bool)
    f = np.broadcast_to(np.asarray(feh, dtype=float), (n,)) if np.ndim(feh) else np.full(n, float(feh))
    missing = ~np.isfinite(f)
    f = np.where(missing, 0.0, f)
    u = np.unique(f)
    if len(u) == 1:
        return f.copy(), {float(u[0]): np.arange(n)}, missing
    # per-star metallicities: nearest grid point (after clipping into the fits' range)
    fc = np.clip(f, FEH_GRID[0], FEH_GRID[-1])
    k = np.abs(fc[:, None] - FEH_GRID[None, :]).argmin(axis=1)
    used = FEH_GRID[k]
    groups = {float(FEH_GRID[j]): np.nonzero(k == j)[0] for j in np.unique(k)}
    return used, groups, missing


def classify_hr(
    logt,
    logl,
    *,
    logt_err=None,
    logl_err=None,
    corr=None,
    feh=None,
    mass=None,
    n_draws: int = 0,
    seed=20240601,
    **params,
) -> ClassificationResult:
    """Label stars from their position on the HR diagram.

    Parameters
    ----------
    logt, logl : array_like
        log10(Teff / K) and log10(L / Lsun); broadcast together. NaN/inf rows come out
        ``unclassified`` with MISSING_INPUT / BAD_INPUT and a reason.
    logt_err, logl_err : array_like, optional
        1-sigma errors (dex); missing or NaN errors count as zero.
    corr : array_like, optional
        Correlation coefficient of the log Teff and log L errors (-1..1), e.g. positive when L was
        derived from R and Teff.
    feh : float or array_like, optional
        [Fe/H] (dex). None: solar with the NO_METALLICITY flag. A scalar (or one common value) uses
        the exact map; differing values use the nearest point of :data:`FEH_GRID` (0.25 dex steps).
    mass : array_like, optional
        Supplied mass (Msun): used as the mass estimate (method ``supplied``), checked against the
        position, used in the cool-but-massive test, and a post-main-sequence star with a supplied
        mass >= the supergiant mass is labelled supergiant.
    n_draws : int
        Monte Carlo draws for the probabilities (0: one-hot probabilities of the point label).
    seed : int
        Seed of the common random numbers (same seed, same probabilities).
    **params
        :class:`~hrstage.stagemap.StageParams` fields and classifier options (:data:`OPTIONS`).

    Returns
    -------
    ClassificationResult

    Notes
    -----
    The label is the stage of the position itself; the probabilities say how the errors spread it.
    Labels are indicative: they come from analytic single-star fits and do not replace a
    spectroscopic analysis.
    """
    stage_kw, opts = _split_params(params)
    logt = _as_array(logt, "logt")
    logl = _as_array(logl, "logl")
    arrays = [logt, logl]
    names = ["logt_err", "logl_err", "corr", "mass"]
    extras = [_as_array(v, k) for k, v in zip(names, (logt_err, logl_err, corr, mass))]
    try:
        shape = np.broadcast_shapes(*(a.shape for a in arrays + [e for e in extras if e is not None]))
    except ValueError:
        raise HrstageInputError("classify_hr: logt, logl and the error/mass arrays do not broadcast together") from None
    n = int(np.prod(shape)) if shape else 1
    logt = np.broadcast_to(logt, shape).ravel().astype(float)
    logl = np.broadcast_to(logl, shape).ravel().astype(float)

    def ext(a, fill):
        if a is None:
            return np.full(n, fill)
        return np.broadcast_to(a, shape).ravel().astype(float)

    st = ext(extras[0], 0.0)
    sl = ext(extras[1], 0.0)
    rho = ext(extras[2], 0.0)
    msup = ext(extras[3], np.nan)
    bad_t = np.isfinite(logt) & ((logt < 2.0) | (logt > 6.5))
    if bad_t.any():
        i = int(np.argmax(bad_t))
        raise HrstageInputError(
            f"logt row {i}: {logt[i]:g} is not a plausible log10(Teff/K) (expected 2..6.5; Teff in K given?)"
        )
    for name, a in (("logt_err", st), ("logl_err", sl)):
        neg = a < 0
        if neg.any():
            i = int(np.argmax(neg))
            raise HrstageInputError(f"{name} row {i}: {a[i]:g} is negative (expected a 1-sigma error >= 0)")
    badc = np.abs(rho) > 1
    if badc.any():
        i = int(np.argmax(badc))
        raise HrstageInputError(f"corr row {i}: {rho[i]:g} is outside -1..1")
    st = np.where(np.isfinite(st), st, 0.0)
    sl = np.where(np.isfinite(sl), sl, 0.0)
    rho = np.where(np.isfinite(rho), rho, 0.0)
    n_draws = int(n_draws)
    if n_draws < 0:
        raise HrstageInputError(f"n_draws={n_draws}: expected >= 0")
    if np.ndim(feh) and np.size(feh) not in (1, n):
        raise HrstageInputError(f"feh: {np.size(feh)} values for {n} stars")
    if np.ndim(feh) and np.size(feh) == 1:
        feh = float(np.ravel(feh)[0])
    feh_used, groups, no_feh = _group_feh(feh, n)

    code = np.full(n, UNCLASSIFIED, dtype=np.int8)
    rawc = np.full(n, UNCLASSIFIED, dtype=np.int8)
    proba = np.zeros((n, N_STAGES))
    mass_est = np.full(n, np.nan)
    mass_err = np.full(n, np.nan)
    m_teff = np.full(n, np.nan)
    m_lum = np.full(n, np.nan)
    flags = np.zeros(n, dtype=np.int64)
    notes: dict = {}
    base = np.empty(n, dtype=object)
    m_sg = np.full(n, np.nan)
    near_to = np.full(n, -1, dtype=np.int8)
    upper_gap = np.full(n, np.nan)
    z1 = z2 = None
    if n_draws > 0:
        z1, z2 = _draws(n_draws, seed)
    finite = np.isfinite(logt) & np.isfinite(logl)
    flags[no_feh] |= F.NO_METALLICITY
    for fg, idx in groups.items():
        sm = stage_map(fg, **stage_kw)
        if sm.z_clipped:
            flags[idx] |= F.METALLICITY_CLIPPED | F.OUTSIDE_VALIDITY
            feh_used[idx] = sm.feh_used
        t, l = logt[idx], logl[idx]
        r = sm.locate_raw(t, l)
        rawc[idx] = r
        c = (r & RAW_STAGE).astype(np.int8)
        m_sg[idx] = sm.m_sg
        # supplied mass >= M_sg on a post-MS position -> supergiant
        ms_ = msup[idx]
        promote = np.isfinite(ms_) & (ms_ >= sm.m_sg) & np.isin(c, (SUBGIANT, GIANT, BRIGHT_GIANT))
        c = np.where(promote, SUPERGIANT, c).astype(np.int8)
        code[idx] = c
        if promote.any():
            pi = idx[promote]
            _note(notes, "0promote", pi, [f"supplied mass {msup[i]:.3g} Msun >= supergiant mass {sm.m_sg:.2f} Msun: "
                                           "post-main-sequence position labelled supergiant" for i in pi])
        # probabilities
        if n_draws > 0:
            has_err = (st[idx] > 0) | (sl[idx] > 0)
            p = np.zeros((len(idx), N_STAGES))
            p[np.arange(len(idx)), c] = 1.0
            if has_err.any():
                e = np.nonzero(has_err)[0]
                cnt = _mc_counts(sm, t[e], l[e], st[idx][e], sl[idx][e], rho[idx][e], z1, z2)
                pe = cnt / float(n_draws)
                pr = promote[e]
                if pr.any():
                    moved = pe[pr][:, [SUBGIANT, GIANT, BRIGHT_GIANT]].sum(axis=1)
                    pe[np.ix_(np.nonzero(pr)[0], [SUBGIANT, GIANT, BRIGHT_GIANT])] = 0.0
                    pe[np.nonzero(pr)[0], SUPERGIANT] += moved
                p[e] = pe
            proba[idx] = p
        else:
            proba[idx, c] = 1.0
        # masses
        mp = sm.mass_at(t, l)
        mass_est[idx] = mp
        m_teff[idx] = sm.ms_mass_from_logt(t)
        m_lum[idx] = sm.ms_mass_from_logl(l)
        # propagated mass error: the mass surface at +-1 sigma (first order, with correlation)
        has_err = (st[idx] > 0) | (sl[idx] > 0)
        if has_err.any():
            e = np.nonzero(has_err)[0]
            te, le, se, de, re_ = t[e], l[e], st[idx][e], sl[idx][e], rho[idx][e]
            with np.errstate(invalid="ignore"):
                dmt = 0.5 * (sm.mass_at(te + se, le) - sm.mass_at(te - se, le))
                dml = 0.5 * (sm.mass_at(te, le + de) - sm.mass_at(te, le - de))
                dmt = np.where(np.isfinite(dmt), dmt, 0.0)
                dml = np.where(np.isfinite(dml), dml, 0.0)
                var = dmt**2 + dml**2 + 2 * re_ * dmt * dml
                mass_err[idx[e]] = np.where(np.isfinite(mp[e]), np.sqrt(np.maximum(var, 0.0)), np.nan)
        # boundary proximity: the label at +-1 sigma (or the default probes) along each axis
        pt = np.where(st[idx] > 0, st[idx], opts["near_logt"])
        pl = np.where(sl[idx] > 0, sl[idx], opts["near_logl"])
        nb = np.full(len(idx), -1, dtype=np.int8)
        for dt_, dl_ in ((pt, 0), (-pt, 0), (0, pl), (0, -pl)):
            cc = sm.locate(t + dt_, l + dl_)
            nb = np.where((nb < 0) & (cc != code[idx]), cc, nb)
        near_to[idx] = nb
        # reasons (base text per stage)
        txt = {
            s: _BASE_REASON[s].format(
                age=sm.params.max_age_myr / 1e3, bgw=sm.params.bright_giant_width, msg=sm.m_sg,
                wmin=sm.params.wd_mass_min, wmax=sm.params.wd_mass_max,
                hlo=sm.params.hot_subdwarf_teff[0], hhi=sm.params.hot_subdwarf_teff[1],
            )
            for s in STAGES
        }
        base[idx] = np.array([LABELS[s] + ": " + txt[s] for s in STAGES], dtype=object)[c]
        hbm = ((r & RAW_HB) != 0) & (c == GIANT)
        if hbm.any():
            base[idx[hbm]] = _HB_REASON.format(dep=sm.params.hb_depth, hgt=sm.params.hb_height)
        # binary band: height above the MS upper edge
        b = (r & RAW_BINARY) != 0
        if b.any():
            ut, ul = sm._ms_top
            upper_gap[idx[b]] = l[b] - _interp_monotone(t[b], ut, ul)
        ex = (r & RAW_EXTRAPOLATED) != 0
        if ex.any():
            flags[idx[ex]] |= F.OUTSIDE_VALIDITY
            tz = 10 ** sm._logt_valid_min
            _note(notes, "3extrap", idx[ex], [f"Teff {10**logt[i]:.0f} K is cooler than the 0.1 Msun ZAMS ({tz:.0f} K): "
                                              "main sequence extrapolated beyond the fits" for i in idx[ex]])
        if sm.z_clipped:
            _note(notes, "3zclip_%g" % fg, idx, [f"[Fe/H]={fg:+.2f} outside the fits (Z 1e-4..0.03): boundaries of "
                                                  f"[Fe/H]={sm.feh_used:+.2f} used"] * len(idx))

    # mass methods
    method = np.asarray(MASS_METHODS, dtype=object)[code]
    method = np.where(((rawc & RAW_HB) != 0) & (code == GIANT), HB_MASS_METHOD, method)
    method = np.where(np.isfinite(mass_est), method, "none")
    sup = np.isfinite(msup)
    if sup.any():
        pos = mass_est[sup]
        ratio = np.maximum(msup[sup] / pos, pos / msup[sup])
        off = np.isfinite(ratio) & (ratio > opts["mass_check_ratio"])
        si = np.nonzero(sup)[0]
        _note(notes, "5mass", si[off], [f"supplied mass {msup[i]:.3g} Msun vs {mass_est[i]:.3g} Msun from the position "
                                        f"({MASS_METHODS[code[i]]})" for i in si[off]])
        mass_est[sup] = msup[sup]
        mass_err[sup] = np.nan
        method[sup] = "supplied"
    nomass = ~sup & ~np.isfinite(mass_est) & finite
    _note(notes, "6nomass", np.nonzero(nomass)[0], ["no mass relation applies here (mass NaN)"] * int(nomass.sum()))

    # cool but massive
    teff = 10.0**logt
    with np.errstate(invalid="ignore", divide="ignore"):
        lum_mass = np.where(np.isfinite(m_lum), m_lum, np.nan)
        too_bright = np.isfinite(logl) & ~np.isfinite(m_lum) & (logl > 5.0)
        cand = np.fmax(lum_mass, np.where(sup, msup, np.nan))
        ratio = cand / m_teff
        cbm = finite & (teff < opts["cool_teff"]) & np.isfinite(m_teff) & (
            (np.isfinite(ratio) & (ratio > opts["cool_massive_ratio"])) | too_bright
        )
    flags[cbm] |= F.COOL_BUT_MASSIVE
    ci = np.nonzero(cbm)[0]

    def cbm_text(i):
        ml = f"{m_lum[i]:.2g} Msun" if np.isfinite(m_lum[i]) else "> 100 Msun"
        s = f"cool but massive: M_MS(Teff)={m_teff[i]:.2g} Msun vs M_MS(L)={ml}"
        if sup[i]:
            s += f", supplied {msup[i]:.3g} Msun"
        return s + f" (Teff {teff[i]:.0f} K < {opts['cool_teff']:.0f} K): likely evolved"

    _note(notes, "1cbm", ci, lambda ii: [cbm_text(i) for i in ii])

    # binary band
    bi = np.nonzero((rawc & RAW_BINARY) != 0)[0]
    flags[bi] |= F.POSSIBLE_BINARY
    _note(notes, "2bin", bi, lambda ii: [f"possible unresolved binary: {upper_gap[i]:.2f} dex above the main-sequence upper edge"
                              + (" (or a subgiant)" if code[i] == MAIN_SEQUENCE else "") for i in ii])
    # near boundary
    ni = np.nonzero((near_to >= 0) & finite)[0]
    flags[ni] |= F.NEAR_BOUNDARY
    _note(notes, "4near", ni, lambda ii: [f"near a boundary: {STAGES[near_to[i]]} within "
                               + (f"1 sigma (dlogT={st[i]:.3f}, dlogL={sl[i]:.3f})" if (st[i] > 0 or sl[i] > 0)
                                  else f"dlogT={opts['near_logt']:g} / dlogL={opts['near_logl']:g} dex") for i in ii])
    # low probability
    sp = proba[np.arange(n), code.astype(np.intp)]
    low = finite & (sp < opts["low_probability"])
    flags[low] |= F.LOW_PROBABILITY
    li = np.nonzero(low)[0]
    _note(notes, "7low", li, lambda ii: [f"label uncertain: P({STAGES[code[i]]})={sp[i]:.2f}, most probable "
                              f"{STAGES[int(np.argmax(proba[i]))]} ({proba[i].max():.2f})" for i in ii])
    # missing / bad input
    miss = np.isnan(logt) | np.isnan(logl)
    badi = ~miss & ~finite
    flags[miss] |= F.MISSING_INPUT
    flags[badi] |= F.BAD_INPUT
    for mask, key, what in ((miss, "8miss", "missing (NaN)"), (badi, "8bad", "not finite (inf)")):
        ii = np.nonzero(mask)[0]
        _note(notes, key, ii, [f"log Teff or log L {what}: not classified"] * len(ii))
        base[ii] = "Unclassified: no position"
        proba[ii] = 0.0
        proba[ii, UNCLASSIFIED] = 1.0
        mass_est[ii] = np.where(sup[ii], msup[ii], np.nan)
        method[ii] = np.where(sup[ii], "supplied", "none")
    # off the map
    off_map = finite & (code == UNCLASSIFIED)
    lk = stage_map(0.0, **stage_kw).grid
    out = off_map & ((logt < lk.t0) | (logt > lk.t1) | (logl < lk.l0) | (logl > lk.l1))
    base[out] = "Unclassified: outside the map (log Teff 3.30-5.30, log L -6..7)"

    return ClassificationResult(
        logt=logt, logl=logl, logt_err=st, logl_err=sl, corr=rho, feh_used=feh_used, code=code, proba=proba,
        mass=mass_est, mass_err=mass_err, mass_method=method.astype(object), mass_ms_teff=m_teff,
        mass_ms_lum=m_lum, flags=flags, n_draws=n_draws, _notes=notes, _base=base,
    )


def estimate_mass(logt, logl, *, feh=None, mass=None, **params):
    """Mass estimates only: ``(mass, mass_err, method)`` arrays, as in :func:`classify_hr`."""
    r = classify_hr(logt, logl, feh=feh, mass=mass, **params)
    return r.mass, r.mass_err, r.mass_method.astype(str)
