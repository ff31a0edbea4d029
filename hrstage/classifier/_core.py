"""Vectorised stage classification of (log Teff, log L) positions (layer 3).

Labels come from the raster of :mod:`hrstage.stagemap`; probabilities from a seeded Monte Carlo
over the (optionally correlated) input errors with common random numbers; masses from the mass
raster (method per stage) or the supplied mass; flags with readable reasons.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field

import numpy as np

from .. import flags as F
from ..errors import HrstageInputError
from ..models.metallicity import Z_MAX, Z_MIN, feh_from_z
from ..stages import (
    BRIGHT_GIANT,
    GIANT,
    HOT_SUBDWARF,
    LABELS,
    MAIN_SEQUENCE,
    PRE_MAIN_SEQUENCE,
    STAGES,
    SUBGIANT,
    SUPERGIANT,
    UNCLASSIFIED,
)
from ..stagemap import FEH_HELD_MAX, MASS_METHODS, RAW_BINARY, RAW_EXTRAPOLATED, RAW_HB, RAW_STAGE, StageParams, prebuild, stage_map
from ._branch import BRANCH_MASS_METHODS, attach_branch, branch_columns
from ._text import CodedText, concat_codes, format_codes, join_notes

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
    "hb_share": 0.4,              # share of horizontal-branch stars where the metal-poor HB band overlaps the MS
}

#: highest [Fe/H] of a map on which the core-helium-burning band's overlap with the main sequence is
#: reported (HB_OR_MAIN_SEQUENCE): the blue horizontal branch is a metal-poor feature (the giant-branch
#: code names horizontal_branch below the same [Fe/H], classifier/_branch.py HB_FEH_MAX)
HB_OVERLAP_FEH_MAX = -1.0

_BASE_REASON = {
    "main_sequence": "between the main-sequence lower edge (ZAMS) and upper edge (TAMS / {age} Gyr position)",
    "subgiant": "between the TAMS and the end of the Hertzsprung gap (base of the giant branch)",
    "giant": "cooler than the end of the Hertzsprung gap, below the bright-giant band",
    "bright_giant": "in the band {bgw} dex under the supergiant lower edge ({msg:.1f} Msun track)",
    "supergiant": "above the post-main-sequence track of {msg:.1f} Msun",
    "white_dwarf": "in the white-dwarf band ({wmin:g}-{wmax:g} Msun radius lines)",
    "subdwarf": "below the main-sequence lower edge, above the white-dwarf band",
    "hot_subdwarf": "Teff {hlo:.0f}-{hhi:.0f} K between the white-dwarf band and the ZAMS",
    "pre_main_sequence": "more than {bo:g} dex above the main-sequence upper edge (more than an equal-mass "
                         "binary explains) and cooler than the subgiant and giant branch of the oldest "
                         "({age} Gyr) stars of this metallicity: no evolved star lies here, so young, still "
                         "contracting towards the main sequence",
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


#: mass-method names: the stage methods (by code), then the special ones
#: Names of the mass methods, indexed by ``ClassificationResult.mass_code``.
MASS_METHOD_NAMES = tuple(MASS_METHODS) + (HB_MASS_METHOD, "none", "supplied") + BRANCH_MASS_METHODS
_M_HB, _M_NONE, _M_SUPPLIED = len(MASS_METHODS), len(MASS_METHODS) + 1, len(MASS_METHODS) + 2
#: base-reason keys beyond the stage codes
_B_HB, _B_NOPOS, _B_OFFMAP, _B_HAYASHI, _B_YOUNGZONE, _B_BARECORE, _B_STRIPPED = (N_STAGES + k for k in range(7))

#: reason of a hot subdwarf that is a bare stellar core left of the main sequence (post-AGB or post-EHB)
_BARECORE_REASON = (
    "Hot subdwarf (bare stellar core, indicative): hotter than the main sequence, between the white-dwarf band "
    "and log L {lmax:.2f}; at log L {lmin:.2f}-{lmax:.2f} the constant-luminosity crossing of a post-AGB star "
    "(central star of a planetary nebula) with a 0.53-1.0 Msun CO core (HPT2000 eq 37; Miller Bertolami 2016, "
    "A&A 588, A25 tracks), hotter than {hhi:.0f} K and fainter a post-AGB star fading towards the white-dwarf "
    "band, a post-extreme-horizontal-branch sdO star or a hot pre-white dwarf; only a spectrum (nebula, H/He "
    "lines, log g) tells them apart"
)
#: reason of a supergiant left of the main sequence
_STRIPPED_REASON = (
    "Supergiant (stripped massive star, indicative): hotter than the main-sequence lower edge and brighter "
    "than any post-AGB star (log L > {lmax:.2f}, HPT2000 eq 37 at a 1.0 Msun CO core): a Wolf-Rayet star or "
    "helium star that lost its hydrogen envelope, labelled supergiant by its luminosity (no mass: the "
    "post-main-sequence luminosity-mass relation does not hold for helium stars)"
)


def _base_table(maps) -> np.ndarray:
    """Object table (n_maps, N_STAGES + 7) of the base reason of every stage / special key per map."""
    tab = np.empty((len(maps), N_STAGES + 7), dtype=object)
    for g, sm in enumerate(maps):
        p = sm.params
        for k, s in enumerate(STAGES):
            tab[g, k] = LABELS[s] + ": " + _BASE_REASON[s].format(
                age=p.max_age_myr / 1e3, bgw=p.bright_giant_width, msg=sm.m_sg, wmin=p.wd_mass_min,
                wmax=p.wd_mass_max, hlo=p.hot_subdwarf_teff[0], hhi=p.hot_subdwarf_teff[1], bo=p.binary_offset)
        tab[g, _B_HB] = _HB_REASON.format(dep=p.hb_depth, hgt=p.hb_height)
        tab[g, _B_BARECORE] = _BARECORE_REASON.format(lmin=sm.logl_post_agb_min, lmax=sm.logl_post_agb_max,
                                                      hhi=p.hot_subdwarf_teff[1])
        tab[g, _B_STRIPPED] = _STRIPPED_REASON.format(lmax=sm.logl_post_agb_max)
        tab[g, _B_NOPOS] = "Unclassified: no position"
        tab[g, _B_OFFMAP] = "Unclassified: outside the map (log Teff 3.30-5.30, log L -6..7)"
        tab[g, _B_YOUNGZONE] = (f"Pre-main sequence: more than {p.binary_offset:g} dex above the main-sequence upper "
                                f"edge, where young and evolved stars overlap, labelled young because "
                                f"young_prior={p.young_prior:g} > 0.5 (a young target list)")
        tab[g, _B_HAYASHI] = ("Unclassified: cooler than the Hayashi line of the lowest-mass stars (no star in "
                              "hydrostatic equilibrium lies there: a brown dwarf, or Teff too low / L too high)")
    return tab


@dataclass
class ClassificationResult:
    """Per-star outcome of :func:`classify_hr` (all arrays of length N, in input order).

    Attributes
    ----------
    stage : ndarray of str
    code : ndarray of int8 (``hrstage.stages`` codes)
    proba : ndarray (N, len(STAGES)), probability per stage (one-hot without Monte Carlo)
    stage_prob : ndarray, probability of the assigned stage
    mass, mass_err : ndarray (Msun); mass_method : ndarray of object (str)
    mass_code : ndarray of int8, index of ``mass_method`` in :data:`MASS_METHOD_NAMES`
    mass_ms_teff, mass_ms_lum : ndarray (Msun), ZAMS masses of the same Teff / the same L
    flags : ndarray of int64 (``hrstage.flags`` bits)
    reason, flag_detail : ndarray of object (readable texts with the numbers; built on first access)
    flag_text : ndarray of object (the flag reasons in words, one text per combination)

    Every per-row value depends only on that row's inputs (and, for the probabilities, on the
    seed and the number of draws): never on the other rows of the call.
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
    mass_code: np.ndarray
    mass_ms_teff: np.ndarray
    mass_ms_lum: np.ndarray
    flags: np.ndarray
    n_draws: int
    #: share of horizontal-branch stars assumed where the metal-poor HB band overlaps the main sequence
    hb_share: float = OPTIONS["hb_share"]
    _notes: list = field(default_factory=list, repr=False)
    _base_key: np.ndarray | None = field(default=None, repr=False)
    _group: np.ndarray | None = field(default=None, repr=False)
    _maps: list = field(default_factory=list, repr=False)
    _teff: np.ndarray | None = field(default=None, repr=False)
    _reason: np.ndarray | None = field(default=None, repr=False)
    _flag_text: np.ndarray | None = field(default=None, repr=False)
    _flag_words: np.ndarray | None = field(default=None, repr=False)
    _built_notes: list | None = field(default=None, repr=False)
    _built_words: list | None = field(default=None, repr=False)
    #: giant branch of every star (:class:`hrstage.classifier._branch.BranchResult`), None if not asked
    branch: object = None

    def __len__(self):
        return len(self.code)

    @property
    def stage(self) -> np.ndarray:
        return np.asarray(STAGES)[self.code]

    @property
    def mass_method(self) -> np.ndarray:
        """How each mass was obtained (object array of str, see :data:`MASS_METHOD_NAMES`)."""
        return np.asarray(MASS_METHOD_NAMES, dtype=object)[self.mass_code]

    @property
    def stage_prob(self) -> np.ndarray:
        return _row_pick(self.proba, self.code)

    @property
    def base_reason(self) -> np.ndarray:
        """The stage region of each star in words (object array), without the flag reasons."""
        n = len(self.code)
        if self._base_key is None or not self._maps:
            return np.full(n, "", dtype=object)
        tab = _base_table(self._maps)
        return tab.reshape(-1)[self._group.astype(np.intp) * tab.shape[1] + self._base_key]

    def flag_notes(self, detail: bool = True) -> list:
        """The flag reasons as notes ``[(row indices, texts), ...]`` in their order of the text
        (see :func:`hrstage.classifier._text.join_coded`), built on first access.

        ``detail=True``: with each star's numbers (hundreds of thousands of distinct texts per
        million flagged rows); ``False``: the same reasons in words only, a few distinct texts (the
        numbers are in the result's other columns).
        """
        if detail:
            if self._built_notes is None:
                self._built_notes = [(idx, b() if callable(b) else b) for idx, b, _ in self._notes]
            return self._built_notes
        if self._built_words is None:
            self._built_words = [(idx, w() if callable(w) else w) for idx, _, w in self._notes]
        return self._built_words

    @property
    def flag_text(self) -> np.ndarray:
        """Readable reasons behind the flags, in words (object array; "" where no flag is set): one
        text per combination of reasons; the numbers are in the other columns."""
        if self._flag_words is None:
            self._flag_words = join_notes(len(self.code), self.flag_notes(detail=False))
        return self._flag_words

    @property
    def flag_detail(self) -> np.ndarray:
        """The reasons of :attr:`flag_text` with each star's own numbers (object array)."""
        if self._flag_text is None:
            self._flag_text = join_notes(len(self.code), self.flag_notes())
        return self._flag_text

    @property
    def reason(self) -> np.ndarray:
        """The stage's region and every flag reason, with the numbers (object array)."""
        if self._reason is None:
            ft = self.flag_detail
            reason = self.base_reason.copy()
            has = np.nonzero(ft != "")[0]
            reason[has] = reason[has] + ("; " + ft[has])
            self._reason = reason
        return self._reason

    def to_columns(self, coded: bool = False) -> dict:
        """Columns named as ``hrstage.columns.CLASSIFY_COLUMNS`` (all but ``hr_source``).

        Text columns (``stage``, ``mass_method``, ``flag_text``) are object arrays of Python
        strings (shared between rows with the same text), not fixed-width arrays. With
        ``coded=True`` they are :class:`~hrstage.classifier._text.CodedText` (distinct texts and a
        code per row) and ``flag_text`` is left out: :meth:`flag_notes` gives its parts.
        """
        if coded:
            stage = CodedText(STAGES, self.code)
        else:
            stage = np.asarray(STAGES, dtype=object)[self.code]
        out = {"stage": stage, "stage_prob": self.stage_prob}
        for k, s in enumerate(STAGES):
            out[f"prob_{s}"] = self.proba[:, k]
        teff = self._teff if self._teff is not None else 10.0**self.logt
        out.update(
            {
                "mass_est": self.mass,
                "mass_err": self.mass_err,
                "mass_method": CodedText(MASS_METHOD_NAMES, self.mass_code) if coded else self.mass_method,
                "mass_ms_teff": self.mass_ms_teff,
                "mass_ms_lum": self.mass_ms_lum,
                "teff_used": teff,
                "logl_used": self.logl,
                "logt_err": self.logt_err,
                "logl_err": self.logl_err,
                "logt_logl_corr": self.corr,
                "feh_used": self.feh_used,
                "flags": self.flags.astype(np.int64, copy=False),
            }
        )
        if self.branch is not None:
            out.update(branch_columns(self.branch, coded))
        if not coded:
            out["flag_text"] = self.flag_text
        return out


def _row_pick(a, k):
    """``a[i, k[i]]`` for every row (a flat gather)."""
    a = np.ascontiguousarray(a)
    n, m = a.shape
    i = np.arange(n, dtype=np.intp)
    i *= m
    i += k
    return a.reshape(-1).take(i)


def _draws(n_draws: int, seed):
    rng = np.random.default_rng(seed)
    z = rng.standard_normal((2, n_draws))
    return z[0].astype(np.float32), z[1].astype(np.float32)


#: stage codes counted in the packed one-hot tables (all but unclassified, which is the remainder)
_PACKED = np.array([c for c in range(N_STAGES) if c != UNCLASSIFIED], dtype=np.intp)
#: bits per packed stage and the most draws one pass may count (the counters must not overflow)
_PACK_BITS = 8
_PACK_MAX = (1 << _PACK_BITS) - 1
_PER_WORD = 64 // _PACK_BITS


def _pack_luts():
    """One-hot tables, one per 64-bit word of 8 stage counters (9 counted stages: two words, the
    second holding what does not fit in the first), with the stage slots of each word."""
    stage = np.arange(128) & RAW_STAGE
    luts, slots = [], []
    for w in range(0, len(_PACKED), _PER_WORD):
        codes = _PACKED[w : w + _PER_WORD]
        slot = np.full(16, -1)
        slot[codes] = np.arange(len(codes))
        s = slot[stage]
        lut = np.where(s >= 0, np.left_shift(np.uint64(1), (_PACK_BITS * np.maximum(s, 0)).astype(np.uint64)),
                       np.uint64(0))
        luts.append(lut.astype(np.uint64))
        slots.append(np.arange(w, w + len(codes)))
    return luts, slots


_PACKS, _PACK_SLOTS = _pack_luts()
_SHIFTS = (_PACK_BITS * np.arange(_PER_WORD)).astype(np.uint64)

#: side (cells) of the blocks of the region-uniform raster used to skip draws: 8 lets 48 % of the
#: stars of benchmarks/bench_pipeline.py's synthetic catalogue skip drawing (16: 42 %; testing the
#: exact cells of each box: 54 %) for ~7 MB of summed-area tables per map (16: ~1.8 MB)
UNIFORM_BLOCK = 8
#: side (cells) of the tiles whose stars are drawn together (memory locality of the gathers)
MC_TILE = 64


def _uniform_tables(sm):
    """Per map (cached on it): block codes (-1 where a block holds more than one stage) and, per
    stage, the summed-area table of "block uniform with this stage" over the block grid."""
    tab = getattr(sm, "_mc_uniform", None)
    if tab is not None:
        return tab
    # kept in the map's on-disk cache (built from the whole raster only once)
    bcode = sm.stored(f"mc_block_codes_{UNIFORM_BLOCK}", _block_codes)
    sat = sm.stored(f"mc_block_sat_{UNIFORM_BLOCK}_{N_STAGES}", lambda _: _block_sat(bcode))
    tab = (bcode, sat.reshape(-1), bcode.shape[0], bcode.shape[1])
    sm._mc_uniform = tab
    return tab


def _block_codes(sm):
    """(by, bx) int8: the stage code of each UNIFORM_BLOCK-square block of the raster, -1 where a
    block holds more than one stage."""
    codes = sm.codes.values  # (ny, nx) stage codes, unpadded
    k = UNIFORM_BLOCK
    ny, nx = codes.shape
    by, bx = -(-ny // k), -(-nx // k)
    pad = np.full((by * k, bx * k), UNCLASSIFIED, dtype=np.int8)
    pad[:ny, :nx] = codes
    blocks = pad.reshape(by, k, bx, k)
    lo = blocks.min(axis=(1, 3))
    hi = blocks.max(axis=(1, 3))
    return np.where(lo == hi, lo, -1).astype(np.int8)


def _block_sat(bcode):
    """(N_STAGES, by + 1, bx + 1) int32: per stage, the summed-area table of "block uniform with
    this stage"."""
    by, bx = bcode.shape
    sat = np.zeros((N_STAGES, by + 1, bx + 1), dtype=np.int32)
    for c in range(N_STAGES):
        sat[c, 1:, 1:] = np.cumsum(np.cumsum(bcode == c, axis=0, dtype=np.int32), axis=1, dtype=np.int32)
    return sat


def _uniform_boxes(sm, xc, yc, ex, ey):
    """Stage code of stars whose whole draw box lies in one stage, -1 for the others.

    ``xc, yc``: unpadded fractional cell coordinates of the centres; ``ex, ey``: half-widths (cells)
    of the box that holds every draw (from the extreme values of the common random numbers), so
    that a skipped star gets exactly the counts the draws would give.
    """
    return _uniform_range(sm, xc - ex, xc + ex, yc - ey, yc + ey)


def _uniform_range(sm, x0, x1, y0, y1):
    """Stage code of stars whose box ``[x0, x1] x [y0, y1]`` (unpadded fractional cells) lies in
    blocks of a single stage, -1 for the others; and whether the box lies inside the raster."""
    g = sm.grid
    inside = (x0 >= 0) & (y0 >= 0) & (x1 < g.nx) & (y1 < g.ny)
    out = np.full(len(x0), -1, dtype=np.int8)
    if not inside.any():
        return out, inside
    if inside.all():
        return _uniform_inside(sm, x0, x1, y0, y1), inside
    i = np.nonzero(inside)[0]
    out[i] = _uniform_inside(sm, x0[i], x1[i], y0[i], y1[i])
    return out, inside


def _uniform_inside(sm, x0, x1, y0, y1):
    """:func:`_uniform_range` of boxes known to lie inside the raster: the stage codes (-1 where a
    box is not uniform)."""
    k = UNIFORM_BLOCK
    bx0, bx1, by0, by1 = (v.astype(np.intp) for v in (x0, x1, y0, y1))
    for v in (bx0, bx1, by0, by1):
        v //= k
    bx1 += 1
    by1 += 1
    return _uniform_blocks(sm, bx0, bx1, by0, by1)


def _hull(z1, z2):
    """Vertices of the convex hull of the points (z1_k, z2_k) (monotone chain; a handful of the
    draws), as float64 arrays: the extreme of any linear combination a z1 + b z2 over the draws
    is reached at one of them. The common random numbers are the same for every map and chunk of
    a run: the hull is kept for the last few sets of them."""
    z1, z2 = np.asarray(z1, float), np.asarray(z2, float)
    h1, h2 = _hull_of(z1.tobytes(), z2.tobytes())
    return h1.copy(), h2.copy()


@functools.lru_cache(maxsize=4)
def _hull_of(b1, b2):
    """:func:`_hull` of the float64 arrays given by their bytes (cached)."""
    z1, z2 = np.frombuffer(b1), np.frombuffer(b2)
    pts = sorted(set(zip(z1.tolist(), z2.tolist())))
    if len(pts) <= 2:
        a = np.array(pts, dtype=float).reshape(-1, 2)
        return a[:, 0], a[:, 1]

    def half(seq):
        h = []
        for p in seq:
            while len(h) >= 2 and ((h[-1][0] - h[-2][0]) * (p[1] - h[-2][1])
                                   - (h[-1][1] - h[-2][1]) * (p[0] - h[-2][0])) <= 0:
                h.pop()
            h.append(p)
        return h[:-1]

    v = np.array(half(pts) + half(pts[::-1]), dtype=float)
    return v[:, 0], v[:, 1]


def _y_extent(a, b, z1, z2):
    """Per star, (min, max) over the draws of ``a z1 + b z2`` (exact, from the hull vertices)."""
    h1, h2 = _hull(z1, z2)
    lo = np.full(len(a), np.inf)
    hi = np.full(len(a), -np.inf)
    v = np.empty(len(a))
    for p, q in zip(h1.tolist(), h2.tolist()):
        np.multiply(a, p, out=v)
        v += b * q
        np.minimum(lo, v, out=lo)
        np.maximum(hi, v, out=hi)
    return lo, hi


#: draws of the common random numbers per group (the groups are compact patches of the (z1, z2)
#: plane): a drawn star whose draws of one group all lie in blocks of one stage gets that group's
#: draws counted there without drawing them (exact, as for whole stars)
MC_GROUP = 32
#: stars tested and drawn group by group together (their per-star arrays stay in the cache)
MC_BLOCK = 16384


def _draw_groups(z1, z2):
    """Index arrays of the draws grouped into compact patches of the (z1, z2) plane: strips of
    z1, each cut along z2 into runs of about :data:`MC_GROUP` draws (a function of the common
    random numbers only, so the grouping is the same for every star)."""
    d = len(z1)
    if d <= MC_GROUP:
        return [np.arange(d)]
    n_groups = -(-d // MC_GROUP)
    strips = max(1, int(round(np.sqrt(n_groups))))
    order = np.argsort(z1, kind="stable")
    groups = []
    for s in np.array_split(order, strips):
        s = s[np.argsort(z2[s], kind="stable")]
        groups += [g for g in np.array_split(s, max(1, -(-len(s) // MC_GROUP))) if len(g)]
    return groups


def _mc_counts(sm, logt, logl, st, sl, rho, z1, z2, chunk=1 << 16):
    """Counts per stage (N, N_STAGES) of the draws, common random numbers z1, z2.

    Stars whose whole draw box (the exact range of their drawn positions, from the extreme z1 and
    the hull of (z1, z2), plus one cell) lies in blocks of a single stage get all draws in that
    stage without drawing (exact). For the other stars inside the raster the same test is made
    per group of draws (:func:`_draw_groups`: the box of a group, from the extremes of its z1
    and z2, plus one cell): a uniform group's draws are counted in its stage, only the other
    groups are drawn. Drawing goes in the order of the stars' raster tiles (so that neighbouring
    stars read neighbouring memory; the counts do not depend on the order), in chunks of about
    ``chunk`` star-draws in float32 index arithmetic on the flattened stage raster (the same
    operations for every draw, so that a drawn cell does not depend on how the draws are
    grouped). Stars whose box leaves the raster are drawn whole with clipping
    (:func:`_draw_counts`).
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
    # one cell of slack for the float32 rounding of the drawn positions
    zlo, zhi = float(np.min(z1)), float(np.max(z1))
    ylo, yhi = _y_extent(sya, syb, z1, z2)
    uni, inside = _uniform_range(sm, xc + sx * zlo - 1.0, xc + sx * zhi + 1.0, yc + ylo - 1.0, yc + yhi + 1.0)
    done = uni >= 0
    counts[np.nonzero(done)[0], uni[done].astype(np.intp)] = d
    for todo, clip in ((np.nonzero(~done & inside)[0], False), (np.nonzero(~done & ~inside)[0], True)):
        if not len(todo):
            continue
        # tiles of MC_TILE x MC_TILE cells, row by row
        ty, tx = np.floor(yc[todo] / MC_TILE), np.floor(xc[todo] / MC_TILE)
        key = ty * (lk.width // MC_TILE + 2) + tx
        todo = todo[np.argsort(key, kind="stable")]
        if clip:
            _draw_counts(lk, counts, todo, xc, yc, sx, sya, syb, z1, z2, chunk, clip)
        else:  # blocks of stars whose per-star arrays stay in the processor's cache
            for b0 in range(0, len(todo), MC_BLOCK):
                _draw_by_group(sm, counts, todo[b0 : b0 + MC_BLOCK], xc, yc, sx, sya, syb, z1, z2, chunk)
    return counts


def _draw_by_group(sm, counts, todo, xc, yc, sx, sya, syb, z1, z2, chunk):
    """Counts of the stars ``todo`` (boxes inside the raster): per group of draws, the uniform
    test of the group's box, then the draws of the non-uniform groups (see :func:`_mc_counts`).

    The drawn stages are summed per star in one packed word (8-bit counters) over all its drawn
    groups, so the draws are taken in rounds of at most 255 (the counters must not overflow)."""
    f32 = np.float32
    xt, yt, sxt, syat, sybt = xc[todo], yc[todo], sx[todo], sya[todo], syb[todo]
    # the float32 operands of the drawing scheme, made once (padded coordinates), one row per star
    ops = np.empty((len(todo), 5), f32)
    for q, v in enumerate((xt + 1.0, yt + 1.0, sxt, syat, sybt)):
        ops[:, q] = v
    # the group boxes in block units: x from x - 1 + sx [a, b], y from y - 1 + (sya z1 + syb z2)
    # over the group's z box (syb >= 0; the sign of sya picks the z1 end), plus one cell
    kb = 1.0 / UNIFORM_BLOCK
    xb0, xb1, sxb = (xt - 1.0) * kb, (xt + 1.0) * kb, sxt * kb
    yb0, yb1 = (yt - 1.0) * kb, (yt + 1.0) * kb
    spb, snb, sbb = np.maximum(syat, 0.0) * kb, np.minimum(syat, 0.0) * kb, sybt * kb
    nt = len(todo)
    lk = sm.codes
    tmp = np.empty(nt)
    for r0 in range(0, len(z1), _PACK_MAX):
        rz1, rz2 = z1[r0 : r0 + _PACK_MAX], z2[r0 : r0 + _PACK_MAX]
        acc = np.zeros(nt, np.uint64)  # packed stage counters of the drawn groups
        extra = np.zeros((nt, len(_KERNEL_EXTRA)), np.int64)
        ucnt = np.zeros((nt, N_STAGES), np.int64)  # draws of the uniform groups
        flat_u = ucnt.reshape(-1)
        for g in _draw_groups(rz1, rz2):
            g1, g2 = rz1[g], rz2[g]
            a, b = float(g1.min()), float(g1.max())
            c0, c1 = float(g2.min()), float(g2.max())
            bx0 = _block_index(xb0, sxb, a, tmp)
            bx1 = _block_index(xb1, sxb, b, tmp)
            bx1 += 1
            np.multiply(spb, a, out=tmp)
            tmp += yb0
            tmp += snb * b
            tmp += sbb * c0
            by0 = tmp.astype(np.intp)
            np.multiply(spb, b, out=tmp)
            tmp += yb1
            tmp += snb * a
            tmp += sbb * c1
            by1 = tmp.astype(np.intp)
            by1 += 1
            uni = _uniform_blocks(sm, bx0, bx1, by0, by1)
            ui = np.nonzero(uni >= 0)[0]
            flat_u[ui * N_STAGES + uni[ui]] += len(g)
            if len(ui) == nt:
                continue
            rest = np.nonzero(uni < 0)[0]
            _draw_kernel(lk, acc, extra, rest, ops[rest], g1, g2, chunk)
        part = ((acc[:, None] >> _SHIFTS[None, : len(_KERNEL_SLOTS)]) & np.uint64(_PACK_MAX)).astype(np.int64)
        ucnt[:, _KERNEL_SLOTS] += part
        ucnt[:, list(_KERNEL_EXTRA)] += extra
        ucnt[:, UNCLASSIFIED] += len(rz1) - ucnt.sum(axis=1)
        counts[todo] += ucnt


def _block_index(v0, sv, z, tmp):
    """``floor(v0 + sv z)`` as intp (block coordinates >= 0 of boxes inside the raster)."""
    np.multiply(sv, z, out=tmp)
    tmp += v0
    return tmp.astype(np.intp)


def _uniform_blocks(sm, bx0, bx1, by0, by1):
    """Stage code of the block boxes ``[bx0, bx1) x [by0, by1)`` (inside the raster) that hold a
    single stage, -1 for the others."""
    bcode, sat, by, bx = _uniform_tables(sm)
    out = np.full(len(bx0), -1, dtype=np.int8)
    c = bcode.reshape(-1).take(by0 * bx + bx0)
    i = np.nonzero(c >= 0)[0]  # the corner block is uniform: test the whole box
    c, bx0, by0, bx1, by1 = c[i].astype(np.intp), bx0[i], by0[i], bx1[i], by1[i]
    w1 = bx + 1
    cp = c * ((by + 1) * w1)
    r0 = by0 * w1
    r0 += cp
    r1 = by1 * w1
    r1 += cp
    tot = sat.take(r1 + bx1) - sat.take(r0 + bx1) - sat.take(r1 + bx0) + sat.take(r0 + bx0)
    full = tot == (by1 - by0) * (bx1 - bx0)
    out[i[full]] = c[full].astype(np.int8)
    return out


#: the one-hot table of the drawing kernel: the first eight counted stages, 8-bit counters in one
#: 64-bit word; the counted stages beyond them are counted by comparison where a pass meets them
_KERNEL_LUT, _KERNEL_SLOTS = _PACKS[0], _PACKED[_PACK_SLOTS[0]]
_KERNEL_EXTRA = tuple(int(c) for c in _PACKED[len(_PACK_SLOTS[0]):])


def _draw_buffers(rows, k, code_dtype):
    """Work arrays of a drawing pass, allocated once per call (fresh large temporaries per pass
    cost page faults): x, y, t (float32), i, j (int32), the drawn codes, the packed words
    (``rows x k``) and one uint64 sum per star."""
    f32 = np.float32
    return (np.empty((rows, k), f32), np.empty((rows, k), f32), np.empty((rows, k), f32),
            np.empty((rows, k), np.int32), np.empty((rows, k), np.int32), np.empty((rows, k), code_dtype),
            np.empty((rows, k), np.uint64), np.empty(rows, np.uint64))


def _draw_kernel(lk, acc, extra, rows, ops, z1, z2, chunk):
    """Draws z1, z2 (float32, at most 255) of the stars ``rows``, ``ops`` their float32 padded
    coordinates and scales (columns x, y, sx, sya, syb), all positions inside the raster (no clipping); the float32
    operations and their order are those of :func:`_draw_counts`. Adds the packed one-hot word of
    the first eight counted stages to ``acc[rows]`` and the counts of the other counted stages
    to ``extra[rows]`` (by comparison, only in the passes whose cells hold them)."""
    w = np.int32(lk.width)
    flat = lk.flat
    xp, yp, sx, sya, syb = (ops[:, q] for q in range(5))
    k = len(z1)
    step = max(1, chunk // k)
    zz1, zz2 = z1[None, :], z2[None, :]
    bx, by, bt, bi, bj, bc, bp, sums = _draw_buffers(step, k, flat.dtype)
    bci = np.empty((step, k), np.intp)
    for s in range(0, len(rows), step):
        e = min(len(rows), s + step)
        m = e - s
        x, y, t, i, j, c, ci, pk, a = bx[:m], by[:m], bt[:m], bi[:m], bj[:m], bc[:m], bci[:m], bp[:m], sums[:m]
        np.multiply(sx[s:e, None], zz1, out=x)
        x += xp[s:e, None]
        np.multiply(sya[s:e, None], zz1, out=y)
        np.multiply(syb[s:e, None], zz2, out=t)
        y += t
        y += yp[s:e, None]
        np.copyto(i, y, casting="unsafe")  # truncation (coordinates >= 0), as astype
        i *= w
        np.copyto(j, x, casting="unsafe")
        i += j
        flat.take(i, out=c, mode="clip")  # indices are inside (clip: no buffered bounds check)
        np.copyto(ci, c)
        _KERNEL_LUT.take(ci, out=pk, mode="clip")
        pk.sum(axis=1, dtype=np.uint64, out=a)
        rr = rows[s:e]
        acc[rr] += a
        for q, code in enumerate(_KERNEL_EXTRA):
            hit = c == code
            if hit.any():
                extra[rr, q] += hit.sum(axis=1)


def _draw_counts(lk, counts, todo, xc, yc, sx, sya, syb, z1, z2, chunk, clip):
    """Counts of the drawn stars ``todo`` (see :func:`_mc_counts`), written into ``counts``.

    Every pass writes into buffers allocated once (no fresh arrays per chunk: large temporaries
    cost page faults); the float32 operations and their order are those of the drawing scheme,
    so the drawn cells do not depend on the chunking.
    """
    f32 = np.float32
    d = len(z1)
    xmax, ymax = f32(lk.xmax), f32(lk.ymax)
    w = np.int32(lk.width)
    flat = lk.flat
    rows = max(1, chunk // d)
    xp = (xc[todo] + 1.0).astype(f32)[:, None]  # padded coordinates
    yp = (yc[todo] + 1.0).astype(f32)[:, None]
    sxt, syat, sybt = sx[todo].astype(f32)[:, None], sya[todo].astype(f32)[:, None], syb[todo].astype(f32)[:, None]
    nb = min(d, _PACK_MAX)
    npk = len(_PACKED)
    field = np.uint64(_PACK_MAX)
    bx, by, bt, bi, bj, bc, bp, acc = _draw_buffers(rows, nb, flat.dtype)
    for s in range(0, len(todo), rows):
        e = min(len(todo), s + rows)
        m = e - s
        sub_total = np.zeros((m, npk), dtype=np.int64)
        for b in range(0, d, _PACK_MAX):
            zz1, zz2 = z1[None, b : b + _PACK_MAX], z2[None, b : b + _PACK_MAX]
            k = zz1.shape[1]
            x, y, t = bx[:m, :k], by[:m, :k], bt[:m, :k]
            i, j, c, pk, a = bi[:m, :k], bj[:m, :k], bc[:m, :k], bp[:m, :k], acc[:m]
            np.multiply(sxt[s:e], zz1, out=x)
            x += xp[s:e]
            if clip:  # fmax/fmin send NaN to the border as well (np.clip would keep it)
                np.fmax(x, 0, out=x)
                np.fmin(x, xmax, out=x)
            np.multiply(syat[s:e], zz1, out=y)
            np.multiply(sybt[s:e], zz2, out=t)
            y += t
            y += yp[s:e]
            if clip:
                np.fmax(y, 0, out=y)
                np.fmin(y, ymax, out=y)
            np.copyto(i, y, casting="unsafe")  # truncation (coordinates >= 0), as astype
            i *= w
            np.copyto(j, x, casting="unsafe")
            i += j
            flat.take(i, out=c, mode="clip")  # indices are inside (clip: no buffered bounds check)
            for lut, sl in zip(_PACKS, _PACK_SLOTS):
                lut.take(c, out=pk, mode="clip")
                pk.sum(axis=1, dtype=np.uint64, out=a)
                sub_total[:, sl] += ((a[:, None] >> _SHIFTS[None, : len(sl)]) & field).astype(np.int64)
        rr = todo[s:e]
        counts[np.ix_(rr, _PACKED)] = sub_total
        counts[rr, UNCLASSIFIED] = d - sub_total.sum(axis=1)


def _group_feh(feh, n):
    """Metallicity per star -> (feh_used per star, groups {feh: index array}, no_feh mask).

    A scalar uses the exact map of that [Fe/H]. An array (one value per star) always uses, for
    each star, the nearest point of :data:`FEH_GRID` after clipping into the fits' range -- the
    choice depends on that star's value only, never on the other rows of the call.
    """
    if feh is None:
        return np.zeros(n), {0.0: np.arange(n)}, np.ones(n, bool)
    if np.ndim(feh) == 0:
        f = float(feh)
        if not np.isfinite(f):
            return np.zeros(n), {0.0: np.arange(n)}, np.ones(n, bool)
        return np.full(n, f), {f: np.arange(n)}, np.zeros(n, bool)
    f = np.broadcast_to(np.asarray(feh, dtype=float).ravel(), (n,))
    missing = ~np.isfinite(f)
    fc = np.clip(np.where(missing, 0.0, f), FEH_GRID[0], FEH_GRID[-1])
    # nearest grid point: the midpoints between grid points split the range (ties go up)
    mids = 0.5 * (FEH_GRID[1:] + FEH_GRID[:-1])
    k = np.searchsorted(mids, fc, side="right")
    used = FEH_GRID[k]
    if n and (k == k[0]).all():
        groups = {float(FEH_GRID[k[0]]): np.arange(n)}
    else:
        groups = {float(FEH_GRID[j]): np.nonzero(k == j)[0] for j in np.unique(k)}
    return used, groups, missing


def _axis_coords(lk, t, l):
    """Unclipped padded fractional cell coordinates (float32) of positions in a Lookup."""
    x = (t * lk.inv_dt + lk.ax).astype(np.float32)
    y = (l * lk.inv_dl + lk.ay).astype(np.float32)
    return x, y


def _gather(lk, x, y, dx=0.0, dy=0.0):
    """Values of Lookup ``lk`` at padded coordinates ``(x + dx, y + dy)`` (NaN/out of range -> border)."""
    xs = x + dx if np.ndim(dx) or dx else x.copy()
    np.fmax(xs, 0, out=xs)
    np.fmin(xs, np.float32(lk.xmax), out=xs)
    ys = y + dy if np.ndim(dy) or dy else y.copy()
    np.fmax(ys, 0, out=ys)
    np.fmin(ys, np.float32(lk.ymax), out=ys)
    i = ys.astype(np.int32)
    i *= np.int32(lk.width)
    i += xs.astype(np.int32)
    return lk.flat.take(i)


# post-main-sequence stages that a supplied mass >= M_sg turns into supergiant
_POST_MS_PROMOTABLE = np.array([SUBGIANT, GIANT, BRIGHT_GIANT, SUPERGIANT], dtype=np.int8)

def distinct_texts(a: float, b: float, spec: str = "+.{}f", digits=(2, 3, 4)):
    """``a`` and ``b`` formatted with the fewest decimals (of ``digits``) that tell them apart, so
    that a clipped value and its limit never print alike ("+0.18 ... +0.18")."""
    for d in digits:
        ta, tb = format(a, spec.format(d)), format(b, spec.format(d))
        if ta != tb:
            return ta, tb
    return ta, tb


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
    logg=None,
    logg_err=None,
    branches: bool = True,
    gravity_mass=True,
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
        [Fe/H] (dex). None: solar with the NO_METALLICITY flag. A scalar uses the exact map of that
        metallicity; an array (per star, even if all values are equal) uses for each star the
        nearest point of :data:`FEH_GRID` (0.25 dex steps), so that a star's result never depends
        on the other rows. NaN in an array: solar, flagged. From +0.18 (the fits' Z = 0.03) to +0.5
        the Z = 0.03 boundaries are used without a flag (checked against PARSEC Z = 0.03 and 0.04,
        docs/stagemap.md); values outside -2.3..+0.5 are clipped and flagged METALLICITY_CLIPPED.
    mass : array_like, optional
        Supplied mass (Msun): used as the mass estimate (method ``supplied``), checked against the
        position, used in the cool-but-massive test, and a post-main-sequence star with a supplied
        mass >= the supergiant mass is labelled supergiant.
    n_draws : int
        Monte Carlo draws for the probabilities (0: one-hot probabilities of the point label).
    logg, logg_err : array_like, optional
        log10 g (cgs) and its error: the giant branch is then decided on the Kiel position, and
        where L is known independently the mass is ``g R^2 / G`` (method ``gravity_radius``).
    branches : bool
        Decide the giant branch of giant-class stars (``result.branch``, the ``branch`` columns;
        core-He burners get their mass from the core-He-burning relations).
    gravity_mass : bool or array_like of bool
        Whether ``logl`` is independent of ``logg`` (per row or for all): only then is the mass
        ``g R^2 / G``.
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
    logt = np.ascontiguousarray(np.broadcast_to(logt, shape).ravel(), dtype=float)
    logl = np.ascontiguousarray(np.broadcast_to(logl, shape).ravel(), dtype=float)

    def ext(a, fill):
        if a is None:
            return np.full(n, fill)
        return np.ascontiguousarray(np.broadcast_to(a, shape).ravel(), dtype=float)

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
    if extras[0] is not None:
        st = np.where(np.isfinite(st), st, 0.0)
    if extras[1] is not None:
        sl = np.where(np.isfinite(sl), sl, 0.0)
    if extras[2] is not None:
        rho = np.where(np.isfinite(rho), rho, 0.0)
    n_draws = int(n_draws)
    if n_draws < 0:
        raise HrstageInputError(f"n_draws={n_draws}: expected >= 0")
    if np.ndim(feh) and np.size(feh) not in (1, n):
        raise HrstageInputError(f"feh: {np.size(feh)} values for {n} stars")
    feh_used, groups, no_feh = _group_feh(feh, n)
    # huge (but finite) inputs and errors are masked deliberately below: no overflow warnings
    with np.errstate(over="ignore", invalid="ignore", divide="ignore", under="ignore"):
        res = _classify(logt, logl, st, sl, rho, msup, feh, feh_used, groups, no_feh, n, n_draws, seed,
                        stage_kw, opts)
    if branches:
        attach_branch(res, logg=logg, logg_err=logg_err, feh=feh, shape=shape,
                      max_age_myr=stage_kw.get("max_age_myr", 13800.0), gravity=gravity_mass,
                      feh_groups=(feh_used, groups))
    return res


def _build_threads() -> int:
    """Threads for building several stage maps: two where this process may use two cores."""
    import os

    try:
        return min(2, len(os.sched_getaffinity(0)))
    except AttributeError:  # pragma: no cover (macOS, Windows)
        return min(2, os.cpu_count() or 1)


def _classify(logt, logl, st, sl, rho, msup, feh, feh_used, groups, no_feh, n, n_draws, seed, stage_kw, opts):
    code = np.full(n, UNCLASSIFIED, dtype=np.int8)
    rawc = np.full(n, UNCLASSIFIED, dtype=np.int8)
    proba = np.zeros((n, N_STAGES))
    mass_est = np.full(n, np.nan)
    mass_err = np.full(n, np.nan)
    m_teff = np.full(n, np.nan)
    m_lum = np.full(n, np.nan)
    flags = np.zeros(n, dtype=np.int64)
    group = np.zeros(n, dtype=np.int16)
    maps = []
    m_sg = np.full(n, np.nan)
    tz_row = np.full(n, np.nan)
    near_to = np.full(n, -1, dtype=np.int8)
    zone_alt = np.full(n, -1, dtype=np.int8)  # young-or-evolved zone: the evolved label there, else -1
    z1 = z2 = None
    if n_draws > 0:
        z1, z2 = _draws(n_draws, seed)
    finite = np.isfinite(logt) & np.isfinite(logl)
    F.or_flag(flags, no_feh, F.NO_METALLICITY)
    has_err_all = (st > 0) | (sl > 0)
    single = len(groups) == 1
    drew = False  # whether any probabilities came from draws (else they are one-hot at the label)
    if len(groups) > 1:   # several metallicities: their maps are built together (threads)
        prebuild(list(groups), workers=_build_threads(), **stage_kw)
    for gi, (fg, idx) in enumerate(groups.items()):
        sm = stage_map(fg, **stage_kw)
        maps.append(sm)
        sel = slice(None) if single else idx
        if not single:
            group[idx] = gi
        if sm.z_clipped:  # scalar [Fe/H] outside the fits (arrays are clipped onto the grid)
            feh_used[sel] = sm.feh_used
        t, l = logt[sel], logl[sel]
        ts, ls, rs = st[sel], sl[sel], rho[sel]
        r = sm.locate_raw(t, l)
        rawc[sel] = r
        c = (r & RAW_STAGE).astype(np.int8)
        m_sg[sel] = sm.m_sg
        tz_row[sel] = 10 ** sm._logt_valid_min
        # supplied mass >= M_sg on a post-MS position -> supergiant
        ms_ = msup[sel]
        promote = (ms_ >= sm.m_sg) & ((c == SUBGIANT) | (c == GIANT) | (c == BRIGHT_GIANT))
        if promote.any():
            c = np.where(promote, SUPERGIANT, c).astype(np.int8)
        code[sel] = c
        # young-or-evolved zone (the evolved label of the cell; -1 outside)
        yz = sm.young_zone
        zx, zy = _axis_coords(yz, t, l)
        za = _gather(yz, zx, zy)
        keep = (c == PRE_MAIN_SEQUENCE) if sm.params.young_prior > 0.5 else ((c == SUBGIANT) | (c == GIANT))
        zone_alt[sel] = np.where(keep & ~promote, za, -1)
        has_err = has_err_all[sel]
        e = None if has_err.all() else np.nonzero(has_err)[0]
        # probabilities
        if n_draws > 0 and has_err.any():
            drew = True
            te, le, se, de, re_ = (t, l, ts, ls, rs) if e is None else (t[e], l[e], ts[e], ls[e], rs[e])
            cnt = _mc_counts(sm, te, le, se, de, re_, z1, z2)
            if e is None and single:
                np.divide(cnt, float(n_draws), out=proba)
                pe = proba
            else:
                pe = cnt / float(n_draws)
            pr = promote if e is None else promote[e]
            if pr.any():
                cols = [SUBGIANT, GIANT, BRIGHT_GIANT]
                ip = np.nonzero(pr)[0]
                moved = pe[np.ix_(ip, cols)].sum(axis=1)
                pe[np.ix_(ip, cols)] = 0.0
                pe[ip, SUPERGIANT] += moved
            if pe is not proba:
                if e is None:
                    p = pe
                else:
                    p = np.zeros((len(c), N_STAGES))
                    p[np.arange(len(c)), c] = 1.0
                    p[e] = pe
                proba[sel] = p
        else:
            proba[np.arange(n) if single else idx, c] = 1.0
        # masses
        mlk = sm.mass_lookup
        mx, my = _axis_coords(mlk, t, l)
        mp = _gather(mlk, mx, my).astype(float)
        mass_est[sel] = mp
        m_teff[sel] = sm.ms_mass_from_logt(t)
        m_lum[sel] = sm.ms_mass_from_logl(l)
        # propagated mass error: the mass surface at +-1 sigma (first order, with correlation)
        # (only where a mass exists: the error of a NaN mass is NaN)
        em = np.nonzero(has_err & np.isfinite(mp))[0]
        if len(em):
            e = None if len(em) == len(mp) else em
            if e is None:
                xe, ye, se, de, re_, mpe = mx, my, ts, ls, rs, mp
            else:
                xe, ye, se, de, re_, mpe = mx[e], my[e], ts[e], ls[e], rs[e], mp[e]
            sx = (se * mlk.inv_dt).astype(np.float32)
            sy = (de * mlk.inv_dl).astype(np.float32)
            dmt = 0.5 * (_gather(mlk, xe, ye, sx).astype(float) - _gather(mlk, xe, ye, -sx))
            dml = 0.5 * (_gather(mlk, xe, ye, 0.0, sy).astype(float) - _gather(mlk, xe, ye, 0.0, -sy))
            dmt[~np.isfinite(dmt)] = 0.0
            dml[~np.isfinite(dml)] = 0.0
            var = dmt * dmt + dml * dml + 2 * re_ * dmt * dml
            me = np.sqrt(np.maximum(var, 0.0))
            me[~np.isfinite(mpe)] = np.nan
            if e is None:
                mass_err[sel] = me
            else:
                mass_err[idx[e] if not single else e] = me
        # boundary proximity: the label at +-1 sigma (or the default probes) along each axis
        lk = sm.codes
        x, y = _axis_coords(lk, t, l)
        pt = (np.where(ts > 0, ts, opts["near_logt"]) * lk.inv_dt).astype(np.float32)
        pl = (np.where(ls > 0, ls, opts["near_logl"]) * lk.inv_dl).astype(np.float32)
        cref = code[sel]
        nb = np.full(len(c), -1, dtype=np.int8)
        # stars whose stage runs on beyond both probes (free-run raster) keep their label there:
        # only the others are probed (a probe lands at most ceil(offset) + 1 cells away)
        fr = _gather(sm.free_run, x, y)
        unit = np.float32(sm.FREE_RUN_UNIT)
        clear = ((fr & 15) * unit >= pt + 2) & ((fr >> 4) * unit >= pl + 2) & ~promote
        pr_ = np.nonzero(~clear)[0]
        if len(pr_) < len(c):
            x, y, pt, pl, cref = x[pr_], y[pr_], pt[pr_], pl[pr_], cref[pr_]
        sub = np.full(len(pr_), -1, dtype=np.int8)
        # a star promoted to supergiant by its supplied mass would be promoted at any post-MS
        # probe too: there the probe's label is the same, not a neighbouring stage
        prm = promote[pr_] if promote.any() else None
        for dx, dy in ((pt, 0.0), (-pt, 0.0), (0.0, pl), (0.0, -pl)):
            cc = _gather(lk, x, y, dx, dy)
            if prm is not None:
                cc = np.where(prm & np.isin(cc, _POST_MS_PROMOTABLE), SUPERGIANT, cc).astype(cc.dtype)
            hit = (sub < 0) & (cc != cref)
            sub[hit] = cc[hit]
        nb[pr_] = sub
        near_to[sel] = nb
        if not single:   # several maps: hold the raster pages of one at a time (on-disk cache)
            sm.release_pages()

    # young or evolved: the HR position cannot tell them apart; the probabilities at the star's
    # position are shared by the prior young_prior (the label is the evolved one unless it is > 0.5)
    young_or_ev = zone_alt >= 0
    yp = maps[0].params.young_prior if maps else 0.0
    if young_or_ev.any():
        yi = np.nonzero(young_or_ev)[0]
        if yp > 0.5:
            moved = (1.0 - yp) * proba[yi, PRE_MAIN_SEQUENCE]
            proba[yi, PRE_MAIN_SEQUENCE] -= moved
            proba[yi, zone_alt[yi]] += moved
        else:
            moved = yp * (proba[yi, SUBGIANT] + proba[yi, GIANT])
            proba[yi, SUBGIANT] *= 1.0 - yp
            proba[yi, GIANT] *= 1.0 - yp
            proba[yi, PRE_MAIN_SEQUENCE] += moved
        drew = True  # probabilities are no longer one-hot at the label
    F.or_flag(flags, young_or_ev, F.YOUNG_OR_EVOLVED)

    # blue horizontal branch or main sequence: on metal-poor maps the core-He-burning band (HPT2000
    # ZAHB, eq 53) overlaps the upper main sequence hotter than ~7500-10000 K; an A/B star there is a
    # BHB star or a main-sequence star (in the halo: a blue straggler). Both get their probability:
    # the HB share is the option hb_share (label main_sequence unless it is > 0.5)
    hb_or_ms = np.zeros(n, dtype=bool)
    hs = opts["hb_share"]
    for g, sm in enumerate(maps):
        if sm.feh_used > HB_OVERLAP_FEH_MAX or sm._hb_band is None:
            continue
        ii = np.nonzero(finite & (code == MAIN_SEQUENCE) & (group == g))[0]
        if not len(ii):
            continue
        ht, hlo, hhi = sm._hb_band
        x = logt[ii]
        inside = (x >= ht[0]) & (x <= ht[-1]) & (logl[ii] >= np.interp(x, ht, hlo)) & (logl[ii] <= np.interp(x, ht, hhi))
        hb_or_ms[ii[inside]] = True
        if hs > 0.5:   # labelled horizontal branch: the typical current mass of a ZAHB star of that Teff
            mass_est[ii[inside]] = sm._hb_mass(x[inside])
            mass_err[ii[inside]] = np.nan
    if hb_or_ms.any():
        hi_ = np.nonzero(hb_or_ms)[0]
        moved = hs * proba[hi_, MAIN_SEQUENCE]
        proba[hi_, MAIN_SEQUENCE] -= moved
        proba[hi_, GIANT] += moved
        if hs > 0.5:
            code[hi_] = GIANT
            rawc[hi_] = np.int8(GIANT | RAW_HB)
        drew = True
    F.or_flag(flags, hb_or_ms, F.HB_OR_MAIN_SEQUENCE)

    # per-row metallicity outside the fits (array input): clipped onto the grid, flagged
    if feh is not None and np.ndim(feh):
        fa = np.broadcast_to(np.asarray(feh, dtype=float).ravel(), (n,))
        # up to FEH_HELD_MAX the top node's (Z = 0.03) boundaries are a checked treatment: no flag
        zc = np.isfinite(fa) & ((fa < FEH_GRID[0]) | (fa > FEH_HELD_MAX))
        feh_given = fa
    else:
        zc = np.zeros(n, bool)
        if maps and maps[0].z_clipped:
            zc[:] = True
        feh_given = np.full(n, float(feh) if feh is not None and np.isfinite(float(feh)) else 0.0)
    F.or_flag(flags, zc, F.METALLICITY_CLIPPED | F.OUTSIDE_VALIDITY)

    notes = []

    def note(key, mask_or_idx, build, short):
        """A reason on the rows of ``mask_or_idx``: ``build`` gives the text with each star's numbers
        (a string, or ``build(idx) -> (texts, codes)``), ``short`` the same reason in words only (a
        string, or ``short(idx)`` with few distinct texts: the numbers are in the output columns)."""
        idx = np.nonzero(mask_or_idx)[0] if mask_or_idx.dtype == bool else mask_or_idx
        if len(idx):
            notes.append((key, idx, build if isinstance(build, str) else (lambda: build(idx)),
                          short if isinstance(short, str) else (lambda: short(idx))))

    post = (rawc & RAW_STAGE)
    promoted = (code == SUPERGIANT) & (post != SUPERGIANT)
    note("0promote", promoted, lambda ii: format_codes(
        lambda m, g: f"supplied mass {m:.3g} Msun >= supergiant mass {g:.2f} Msun: post-main-sequence position "
                     "labelled supergiant", len(ii), (msup[ii], ".3g"), (m_sg[ii], ".2f")),
         "supplied mass >= the supergiant mass of the map: post-main-sequence position labelled supergiant")

    # mass methods
    hb = ((rawc & RAW_HB) != 0) & (code == GIANT)
    mcode = code.astype(np.int8)
    mcode[hb] = _M_HB
    mcode[~np.isfinite(mass_est)] = _M_NONE
    sup = np.isfinite(msup)
    if sup.any():
        si = np.nonzero(sup)[0]
        pos = mass_est[si]
        ratio = np.maximum(msup[si] / pos, pos / msup[si])
        off = si[np.isfinite(ratio) & (ratio > opts["mass_check_ratio"])]
        mest_off = mass_est[off]
        note("5mass", off, lambda ii: format_codes(
            lambda a, b, k: f"supplied mass {a:.3g} Msun vs {b:.3g} Msun from the position ({MASS_METHODS[k]})",
            len(ii), (msup[ii], ".3g"), (mest_off, ".3g"), (code[ii], None)),
            lambda ii: format_codes(
                lambda k: f"supplied mass and the mass from the position ({MASS_METHODS[k]}) differ by more "
                          f"than a factor {opts['mass_check_ratio']:g}", len(ii), (code[ii], None)))
        mass_est[si] = msup[si]
        mass_err[si] = np.nan
        mcode[si] = _M_SUPPLIED
    nomass = ~sup & ~np.isfinite(mass_est) & finite

    # cool but massive
    teff = 10.0**logt
    too_bright = np.isfinite(logl) & ~np.isfinite(m_lum) & (logl > 5.0)
    cand = np.fmax(m_lum, msup)
    ratio = cand / m_teff
    # (not for young stars: they are too luminous for the main sequence because they are still contracting)
    cbm = finite & (code != PRE_MAIN_SEQUENCE) & (teff < opts["cool_teff"]) & np.isfinite(m_teff) & (
        (np.isfinite(ratio) & (ratio > opts["cool_massive_ratio"])) | too_bright
    )
    F.or_flag(flags, cbm, F.COOL_BUT_MASSIVE)
    cool = opts["cool_teff"]

    def cbm_text(ii):
        head = format_codes(
            lambda mt, ml: f"cool but massive: M_MS(Teff)={mt:.2g} Msun vs M_MS(L)="
                           + (f"{ml:.2g} Msun" if np.isfinite(ml) else "> 100 Msun"),
            len(ii), (m_teff[ii], ".2g"), (m_lum[ii], ".2g"))
        tail = format_codes(
            lambda ms, tf: (f", supplied {ms:.3g} Msun" if np.isfinite(ms) else "")
                           + f" (Teff {tf:.0f} K < {cool:.0f} K): likely evolved",
            len(ii), (msup[ii], ".3g"), (teff[ii], ".0f"))
        return concat_codes(head, tail)

    note("1cbm", cbm, cbm_text,
         f"cool but massive: the main-sequence mass of its L (mass_ms_lum) or the supplied mass is above that "
         f"of its Teff (mass_ms_teff) at Teff < {cool:.0f} K: likely evolved")

    # binary band
    b = (rawc & RAW_BINARY) != 0
    F.or_flag(flags, b, F.POSSIBLE_BINARY)

    def bin_text(ii):
        # height above the upper edge as the band is built (nearest crossing below, per column)
        gap = np.empty(len(ii))
        gi_ = group[ii]
        for g, sm in enumerate(maps):
            s = gi_ == g
            if s.any():
                gap[s] = sm.binary_band_height(logt[ii[s]], logl[ii[s]])

        def fmt(h, ms):
            where = ("on the main-sequence upper edge" if h == 0.0 or not np.isfinite(h)
                     else f"{h:.2f} dex above the main-sequence upper edge")
            return "possible unresolved binary: " + where + (" (or a subgiant)" if ms else "")

        return format_codes(fmt, len(ii), (gap, ".2f"), (code[ii] == MAIN_SEQUENCE, None))

    note("2bin", b, bin_text, lambda ii: format_codes(
        lambda ms: "possible unresolved binary: on or just above the main-sequence upper edge"
                   + (" (or a subgiant)" if ms else ""), len(ii), (code[ii] == MAIN_SEQUENCE, None)))
    note("2young", young_or_ev, lambda ii: format_codes(
        lambda k, a, pp: f"young or evolved: pre-main-sequence stars also reach this position (hotter than "
                         f"the oldest giant branch, log L < {maps[0].params.pms_logl_max:g}); labelled {STAGES[k]} "
                         f"with P(pre_main_sequence)={pp:.2f} (young_prior={yp:g}; "
                         + ("a young target list" if yp > 0.5 else "a field population") + f", else {STAGES[a]})",
        len(ii), (code[ii], None), (np.where(code[ii] == PRE_MAIN_SEQUENCE, zone_alt[ii], PRE_MAIN_SEQUENCE), None),
        (proba[ii, PRE_MAIN_SEQUENCE], ".2f")), lambda ii: format_codes(
        lambda k, a: f"young or evolved: pre-main-sequence stars also reach this position (hotter than the oldest "
                     f"giant branch, log L < {maps[0].params.pms_logl_max:g}); labelled {STAGES[k]}, else {STAGES[a]} "
                     f"(young_prior={yp:g}; P in prob_pre_main_sequence)",
        len(ii), (code[ii], None), (np.where(code[ii] == PRE_MAIN_SEQUENCE, zone_alt[ii], PRE_MAIN_SEQUENCE), None)))
    note("2hbms", hb_or_ms, lambda ii: format_codes(
        lambda k, pg: f"blue horizontal branch or main sequence: inside the core-helium-burning band (HPT2000 "
                      f"zero-age horizontal branch) where it overlaps the main sequence at this [Fe/H]; labelled "
                      f"{STAGES[k]} with P(giant, horizontal branch)={pg:.2f} (hb_share={hs:g}: halo A stars are "
                      "blue stragglers and BHB stars in comparable numbers); log g separates them",
        len(ii), (code[ii], None), (proba[ii, GIANT], ".2f")), lambda ii: format_codes(
        lambda k: f"blue horizontal branch or main sequence: inside the core-helium-burning band (HPT2000 zero-age "
                  f"horizontal branch) where it overlaps the main sequence at this [Fe/H]; labelled {STAGES[k]} "
                  f"(hb_share={hs:g}; P(horizontal branch) in prob_giant); log g separates them",
        len(ii), (code[ii], None)))
    ex = (rawc & RAW_EXTRAPOLATED) != 0
    F.or_flag(flags, ex, F.OUTSIDE_VALIDITY)
    note("3extrap", ex, lambda ii: format_codes(
        lambda tf, tz, hot: ("brighter than the ZAMS of 100 Msun (the fits' top mass): main sequence "
                             "extrapolated beyond the fits" if hot else
                             f"Teff {tf:.0f} K is cooler than the 0.1 Msun ZAMS ({tz:.0f} K): main sequence "
                             "extrapolated beyond the fits"),
        len(ii), (teff[ii], ".0f"), (tz_row[ii], ".0f"), (teff[ii] > 10000.0, None)), lambda ii: format_codes(
        lambda hot: ("brighter than the ZAMS of 100 Msun (the fits' top mass)" if hot else
                     "cooler than the 0.1 Msun ZAMS") + ": main sequence extrapolated beyond the fits",
        len(ii), (teff[ii] > 10000.0, None)))
    note("3zclip", zc, lambda ii: format_codes(
        lambda fg, fu: "[Fe/H]={} outside the supported -2.30..+{:.2f}: boundaries of [Fe/H]={} used".format(
            distinct_texts(fg, fu)[0], FEH_HELD_MAX, distinct_texts(fg, fu)[1]),
        len(ii), (feh_given[ii], "+.4f"), (feh_used[ii], "+.4f")),
        f"[Fe/H] outside the supported -2.30..+{FEH_HELD_MAX:.2f}: boundaries of the nearest supported [Fe/H] "
        "used (feh_used)")
    # near boundary
    near = (near_to >= 0) & finite
    F.or_flag(flags, near, F.NEAR_BOUNDARY)
    probe = f"dlogT={opts['near_logt']:g} / dlogL={opts['near_logl']:g} dex"

    def near_text(ii):
        he = has_err_all[ii]
        return format_codes(
            lambda k, e_, a, b_: f"near a boundary: {STAGES[k]} within "
                                 + (f"1 sigma (dlogT={a:.3f}, dlogL={b_:.3f})" if e_ else probe),
            len(ii), (near_to[ii], None), (he, None), (np.where(he, st[ii], 0.0), ".3f"),
            (np.where(he, sl[ii], 0.0), ".3f"))

    note("4near", near, near_text, lambda ii: format_codes(
        lambda k, e_: f"near a boundary: {STAGES[k]} within " + ("1 sigma" if e_ else probe),
        len(ii), (near_to[ii], None), (has_err_all[ii], None)))
    note("6nomass", np.nonzero(nomass)[0], "no mass relation applies here (mass NaN)",
         "no mass relation applies here (mass NaN)")
    # low probability
    if drew or opts["low_probability"] > 1.0:
        sp = _row_pick(proba, code)
        low = finite & (sp < opts["low_probability"])
        F.or_flag(flags, low, F.LOW_PROBABILITY)
    else:  # one-hot at the label: P(label) = 1 for every row
        sp = None
        low = np.zeros(n, dtype=bool)
    note("7low", low, lambda ii: format_codes(
        lambda k, p, kb, pb: f"label uncertain: P({STAGES[k]})={p:.2f}, most probable {STAGES[kb]} ({pb:.2f})",
        len(ii), (code[ii], None), (sp[ii], ".2f"), (np.argmax(proba[ii], axis=1), None), (proba[ii].max(axis=1), ".2f")),
        lambda ii: format_codes(
            lambda k, kb: f"label uncertain: P({STAGES[k]}) < {opts['low_probability']:g}, most probable {STAGES[kb]}",
            len(ii), (code[ii], None), (np.argmax(proba[ii], axis=1), None)))
    # missing / bad input
    miss = np.isnan(logt) | np.isnan(logl)
    badi = ~miss & ~finite
    F.or_flag(flags, miss, F.MISSING_INPUT)
    F.or_flag(flags, badi, F.BAD_INPUT)
    base_key = code.astype(np.int8)
    base_key[hb] = _B_HB
    base_key[young_or_ev & (code == PRE_MAIN_SEQUENCE)] = _B_YOUNGZONE
    for mask, what, key in ((badi, "not finite (inf)", "8bad"), (miss, "missing (NaN)", "8miss")):
        ii = np.nonzero(mask)[0]
        note(key, ii, f"log Teff or log L {what}: not classified", f"log Teff or log L {what}: not classified")
        if len(ii):
            base_key[ii] = _B_NOPOS
            proba[ii] = 0.0
            proba[ii, UNCLASSIFIED] = 1.0
            mass_est[ii] = np.where(sup[ii], msup[ii], np.nan)
            mcode[ii] = np.where(sup[ii], _M_SUPPLIED, _M_NONE)
    # bare cores (hot subdwarfs hotter than the hot-subdwarf box or as bright as a post-AGB crossing) and
    # stripped massive stars (supergiants left of the main sequence): their own reasons
    hs_ = finite & (code == HOT_SUBDWARF)
    sg_ = finite & (code == SUPERGIANT)
    if hs_.any() or sg_.any():
        for g, sm in enumerate(maps):
            ii = np.nonzero((hs_ | sg_) & (group == g))[0]
            if not len(ii):
                continue
            core = hs_[ii] & ((logt[ii] > np.log10(sm.params.hot_subdwarf_teff[1]))
                              | (logl[ii] >= sm.logl_post_agb_min))
            base_key[ii[core]] = _B_BARECORE
            base_key[ii[sg_[ii] & sm.stripped_massive(logt[ii], logl[ii])]] = _B_STRIPPED
    # off the map
    lk = maps[0].grid if maps else stage_map(0.0, **stage_kw).grid
    out = finite & (code == UNCLASSIFIED) & ((logt < lk.t0) | (logt > lk.t1) | (logl < lk.l0) | (logl > lk.l1))
    base_key[out] = _B_OFFMAP
    rest = np.nonzero(finite & (code == UNCLASSIFIED) & ~out)[0]
    if len(rest):
        for g, sm in enumerate(maps):
            r_ = rest if len(maps) == 1 else rest[group[rest] == g]
            ht, hl = sm._hayashi
            cold = (logl[r_] <= hl[-1]) & (logt[r_] < np.interp(logl[r_], hl, ht))
            base_key[r_[cold]] = _B_HAYASHI

    return ClassificationResult(
        logt=logt, logl=logl, logt_err=st, logl_err=sl, corr=rho, feh_used=feh_used, code=code, proba=proba,
        mass=mass_est, mass_err=mass_err, mass_code=mcode, mass_ms_teff=m_teff,
        mass_ms_lum=m_lum, flags=flags, n_draws=n_draws, hb_share=hs, _notes=[(i, b, w) for _, i, b, w in sorted(notes, key=lambda x: x[0])], _base_key=base_key, _group=group,
        _maps=maps, _teff=teff,
    )


#: spread (dex) of a mass hypothesis when log g decides between the blue horizontal branch and the main
#: sequence: ZAHB stars of 0.5-0.7 Msun around the typical mass of their Teff (HPT2000 ZAHB band), and
#: the main-sequence mass at the star's Teff (our choice)
HB_MS_LOGM_SPREAD = 0.1


def resolve_hb_or_ms(res, logg, logg_err, rows) -> None:
    """Where log g and an independent L are known, let the gravity-radius mass decide between the blue
    horizontal branch and the main sequence for the stars flagged ``HB_OR_MAIN_SEQUENCE`` (in place).

    ``M = g R^2 / G`` against the two hypotheses in log M: the typical ZAHB mass at the star's Teff
    (``StageMap._hb_mass``, ~0.5-0.7 Msun) and the ZAMS mass of its Teff (A/B main-sequence stars are
    2-5 Msun); Gaussian in log M with the propagated error and :data:`HB_MS_LOGM_SPREAD`, weighted by
    ``hb_share`` as prior. The label is the more probable one.
    """
    from ._branch import gravity_mass

    n = len(res.code)
    cand = ((res.flags & F.HB_OR_MAIN_SEQUENCE) != 0) & np.broadcast_to(np.asarray(rows, bool), (n,))
    g = np.broadcast_to(np.asarray(logg, float), (n,))
    cand &= np.isfinite(g)
    if not cand.any() or not res._maps:
        return
    ii = np.nonzero(cand)[0]
    ge = np.zeros(len(ii)) if logg_err is None else np.nan_to_num(np.broadcast_to(np.asarray(logg_err, float), (n,))[ii])
    m, me = gravity_mass(res.logt[ii], res.logl[ii], g[ii], res.logt_err[ii], res.logl_err[ii], ge, res.corr[ii])
    m_hb = np.empty(len(ii))
    for k, sm in enumerate(res._maps):
        s = res._group[ii] == k
        if s.any():
            m_hb[s] = sm._hb_mass(res.logt[ii[s]])
    m_ms = res.mass_ms_teff[ii]
    s2 = (me / (m * np.log(10.0))) ** 2 + HB_MS_LOGM_SPREAD**2
    lm = np.log10(m)
    hs = res.hb_share
    with np.errstate(all="ignore"):
        d_hb = -0.5 * (lm - np.log10(m_hb)) ** 2 / s2
        d_ms = -0.5 * (lm - np.log10(m_ms)) ** 2 / s2
        top = np.maximum(d_hb, d_ms)
        w_hb = hs * np.exp(d_hb - top)
        w_ms = (1.0 - hs) * np.exp(d_ms - top)
        p_hb = w_hb / (w_hb + w_ms)
    ok = np.isfinite(p_hb)
    ii, p_hb = ii[ok], p_hb[ok]
    both = res.proba[ii, MAIN_SEQUENCE] + res.proba[ii, GIANT]
    res.proba[ii, GIANT] = p_hb * both
    res.proba[ii, MAIN_SEQUENCE] = (1.0 - p_hb) * both
    hb = p_hb > 0.5
    res.code[ii] = np.where(hb, GIANT, MAIN_SEQUENCE).astype(res.code.dtype)
    if res._base_key is not None:
        res._base_key[ii] = np.where(hb, _B_HB, MAIN_SEQUENCE)
    res._reason = None
    res._flag_text = None
    res._flag_words = None
    res._built_notes = None
    res._built_words = None


def estimate_mass(logt, logl, *, feh=None, mass=None, **params):
    """Mass estimates only: ``(mass, mass_err, method)`` arrays, as in :func:`classify_hr`."""
    r = classify_hr(logt, logl, feh=feh, mass=mass, **params)
    return r.mass, r.mass_err, r.mass_method.astype(str)
