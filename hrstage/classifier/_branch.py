"""Which giant branch a giant is on: red giant branch, core-helium burning, AGB (layer 3).

Three hypotheses are weighed for every giant-class star (stage ``giant`` or ``bright_giant``):

- **rgb** -- first ascent of the giant branch, from the base of the giant branch to the tip
  (HPT2000 eqs 10, 46, 49): radius ``R_GB(M, L)``;
- **core_he** -- core-helium burning. Below M_HeF the star starts on the zero-age horizontal
  branch (HPT2000 eqs 53-54, core mass at the flash from eqs 37-38) and brightens by
  while burning helium (a band :data:`HE_BELOW_DEX` / :data:`HE_ABOVE_DEX` about it), its radius keeping the ZAHB's mix of helium-star and
  giant-branch radius, ``R = (1 - f) R_ZHe(Mc) + f R_GB(M, L)`` (eq 54 with L free). From M_HeF up
  (the secondary clump and above) the band starts at the minimum core-He-burning luminosity
  (eq 51) with the radius fraction of the ZAHB at M_HeF;
- **agb** -- above the end of core-helium burning, radius ``R_AGB(M, L)`` (eq 74), split into
  early and thermally pulsing AGB at the core mass of the second dredge-up (eq 69).

Each hypothesis is a family of loci, one per stellar mass. The weight of a locus point is the
number of stars expected there in a population with the Kroupa (2001) initial mass function and
a constant star-formation rate up to ``max_age_myr``: ``xi(M) dM`` times the time spent per dex
(hydrogen-shell burning, :mod:`hrstage.models.shell_burning`, on the RGB; on the AGB the same,
shortened by the faster core growth of helium burning, HPT2000 eqs 68 and 71; :data:`T_HE_YR`
spread over the core-He band). The probability of a hypothesis is the sum over its loci of weight times
a Gaussian in log Teff about the locus at the star's log L (HR route) or log g (Kiel route). Its
width is the star's log Teff error, floored at :data:`SIGMA_T_FLOOR`, with :data:`SIGMA_INT` for
the relations themselves added in quadrature, and the star's log L / log g error widened by
:data:`SIGMA_X_INT`, so that a catalogue without error columns gets the same answer as one with
typical spectroscopic errors; the normalised sums
are the probabilities, and the mass posterior of the winning hypothesis gives the core-He mass.

The answer is a probability, not a certainty: in much of the giant region a first-ascent giant
of one mass sits where a core-He burner of another mass sits; a branch is named only when its
probability reaches ``min_prob`` (default 0.5: more probable than the other two together), else
the star is ``unresolved``.

On the Kiel route the red clump must also lie inside the Bovy et al. (2014) clump box in
(Teff, log g, [Fe/H]) (:mod:`hrstage.models.bovy2014`) where [Fe/H] is inside that selection's
calibration range: a star the model calls core-He burning outside the published box is left
``unresolved``.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..branches import (
    BLUE_LOOP,
    BRANCHES,
    CORE_HE_BRANCHES,
    HYPOTHESES,
    EARLY_AGB,
    HORIZONTAL_BRANCH,
    NOT_GIANT,
    POST_AGB,
    RED_CLUMP,
    RED_GIANT_BRANCH,
    TP_AGB,
    UNRESOLVED,
)
from ..models import hpt2000 as hpt
from ..models import bovy2014, kroupa2001, shell_burning
from ..models.hpt2000.core_mass import agb_time_factor, luminosity_from_mc, mc_from_luminosity, mc_tpagb
from ..models.metallicity import clip_z, z_from_feh
from ..models.stellar import LOGG_SUN, TEFF_SUN
from ..stages import BRIGHT_GIANT, GIANT, SUBGIANT

LOG_TSUN = float(np.log10(TEFF_SUN))
#: model uncertainty of the loci (dex), added in quadrature to each star's errors. HPT2000 (abstract)
#: quote their formulae "accurate to within 5 %" of the detailed models they fit, in L and R. Read
#: as a 2-sigma bound, 5 % in R is 0.5 log10(1.05) / 2 = 0.0053 dex in log Teff at fixed L (~60 K
#: at 4800 K) and 5 % in L is log10(1.05) / 2 = 0.0106 dex along the locus (log L, or log g at
#: fixed Teff and mass). Not fitted to any validation sample. (The HPT2000 RGB at the APOKASC-3 RGB
#: stars' seismic masses, L and [Fe/H] sits 0.0018 dex hotter than their Teff, robust spread
#: 0.0069 dex with their ~0.0042 dex Teff errors: consistent, measured after the choice.)
SIGMA_INT = 0.5 * float(np.log10(1.05)) / 2.0
SIGMA_X_INT = float(np.log10(1.05)) / 2.0
#: floor on a star's own log Teff error (dex; 0.0043 = 50 K at 5000 K): catalogue Teff errors are
#: mostly internal (precision) errors, while the zero points of spectroscopic and photometric Teff
#: scales differ by some tens of K (common practice, from memory). A missing or smaller error is
#: raised to it, so that the probabilities do not hinge on whether (or how optimistically) a
#: catalogue quotes Teff errors.
SIGMA_T_FLOOR = float(np.log10(5050.0 / 5000.0))
#: core-helium-burning lifetime of a low-mass star (yr), above M_HeF shortened in proportion to
#: the luminosity (same fuel, burnt faster; our approximation). Checked against the MIST v1.2
#: 12 Gyr [Fe/H] = -1.35 isochrone (Choi et al. 2016): the initial-mass span of its core-He phase
#: (0.00179 Msun) over that of its RGB per dex at log L 1.5-2.0 gives t_He / t_RGB,dex = 0.743;
#: 1e8 yr with the shell-burning RGB time of :mod:`hrstage.models.shell_burning` gives 0.746 for
#: its 0.81 Msun giants. HPT2000 eq 57 (:func:`hrstage.models.hpt2000.t_he`) gives 107 Myr there
#: (ratio 0.80), 131 Myr for low masses at Z = 0.02, and a peak 2.2x longer just above M_HeF (the
#: secondary clump) where this prior is shorter. Not used here: in the prior, eq 57 moves the
#: APOKASC-3 figures (RC masses 1.00 -> 1.04 x seismic, scatter 15 -> 17 %; Kiel RGB-not-clump
#: 95 -> 89 %), its shape alone (normalised to 1e8 yr at low mass) to 1.04 / 16 % and 91 %: a
#: field sample like Kepler's has fewer young secondary-clump stars than a constant star-formation
#: rate predicts. The branch probabilities depend on the population prior at this level.
T_HE_YR = 1.0e8
#: luminosity band of core-He burning about the eq-53 / eq-51 luminosity (dex): detailed tracks
#: brighten by ~0.2-0.3 dex while burning helium (from memory, e.g. Girardi 2016); the band is placed
#: -0.10 / +0.15 dex about the fit's luminosity (the depth below is the stage map's ``hb_depth``),
#: because at solar metallicity the HPT2000 ZAHB (log L 1.76-1.81 for 1-1.5 Msun) already sits at
#: the clump luminosity rather than at its faint edge. Checked against MIST v1.2 at 12 Gyr, [Fe/H] =
#: -1.35 (Choi et al. 2016): its ZAHB (log L 1.73) is 0.09 dex fainter than eq 53 for the age-limit
#: mass, inside the band's depth; 90 % (97 %) of its core-He time, weighted by the span of initial
#: mass, is spent within 0.06 (0.11) dex above its ZAHB, inside the band's height
HE_BELOW_DEX = 0.10
HE_ABOVE_DEX = 0.15
#: stars lighter than the age-limit mass on the horizontal branch (mass lost on the RGB): the prior
#: density per unit current mass is held flat down to this far below the age-limit mass (Msun,
#: our assumption; the horizontal-branch morphology of real populations varies). This tail is
#: added to, not taken from, the evolved initial masses (which keep their initial mass): it does
#: not conserve the number of stars. A number-conserving version (each initial mass below M_HeF
#: spread over 0-0.3 Msun of loss) raised the APOKASC-3 RC masses by 9 % (1.04 -> 1.13 x seismic
#: with the eq-57 lifetimes, scatter 17 -> 21 %): not used until the mass-loss spread itself is
#: calibrated.
HB_MASS_LOSS = 0.3
#: [Fe/H] at or below which a core-He burner is called horizontal branch rather than red clump,
#: and the Teff from which it is (common practice: the clump is the metal-rich red end of the HB).
#: Both apply only to stars whose core-He-burning mass lies below M_HeF (a degenerate helium flash,
#: HPT2000 eq 2): a heavier core-He burner hotter than HB_TEFF_MIN is on its blue loop (common
#: practice: intermediate-mass stars loop blueward during core-helium burning), never on the HB.
HB_FEH_MAX = -1.0
HB_TEFF_MIN = 5500.0
#: a subgiant-stage star brighter than the base of the giant branch of the oldest stars (the
#: age-limit mass) and at most this much (dex) hotter than their giant branch is on the lower red
#: giant branch: the fits' giant branch is up to ~0.02 dex cooler than detailed metal-poor tracks
#: there (HPT2000 vs MIST at [Fe/H] = -1.35, log L 0.8-1.2), so the stage map calls it subgiant
LOWER_RGB_DLOGT = 0.03
#: mass methods added by the branch work (names in ``ClassificationResult.mass_method``): the
#: posterior mean mass of the most probable hypothesis, and g R^2 / G where log g and L are known
BRANCH_MASS_METHODS = ("red_giant_branch", "core_he_burning", "agb", "gravity_radius")
#: a giant farther than this (in combined log Teff errors, floors included) from every weighted locus
#: point of the three hypotheses gets no branch (``unresolved``): it sits where the loci do not
#: reach (the Hertzsprung gap of intermediate-mass stars, blue loops hotter than the core-He band,
#: the Cepheid strip). Our choice, checked on outside data: APOKASC-3 RGB/RC stars lie within 2.5 sigma
#: (99th percentile), MIST [Fe/H] = -1.35 phases 2-5 within 5 sigma, PARSEC Z = 0.014 core-He phases
#: 4-6 within 8 sigma; a 6000 K star at log L 3 (solar) is 18 sigma away.
OFF_LOCUS_NSIGMA = 8.0
#: margin (in sigma) of the post-AGB tests: hotter than the AGB, lighter than M_HeF
POST_AGB_NSIGMA = 3.0
#: minimum log Teff excess (dex) of a post-AGB star over the hottest HPT2000 AGB locus at its L: the
#: fits' AGB is uncertain at high L -- the PARSEC / COLIBRI TP-AGB (Bressan et al. 2012, Marigo et
#: al. 2017; Z = 0.014 isochrones) reaches up to 0.11 dex hotter than it -- so a star must be hotter
#: by more than that (0.15 dex, ~40 %) besides the 3-sigma margin
POST_AGB_DLOGT = 0.15
#: default probability needed to name a branch: more probable than the other two together
MIN_PROB = 0.5

_M_GRID = np.logspace(np.log10(0.45), np.log10(6.0), 140)
_XL = np.linspace(-0.5, 4.8, 266)     # log L grid (0.02 dex)
_XG = np.linspace(-0.5, 4.5, 251)     # log g grid (0.02 dex)
N_HYP = 3
#: mass-grid stride per hypothesis in the evaluation (rgb, core_he, agb); 1 = every grid mass
MASS_STEP = (1, 1, 1)


@dataclass
class BranchGrids:
    """Loci of the three hypotheses for one metallicity, tabulated per mass on log L and log g grids.

    ``logt[route]``, ``weight[route]``, ``slope[route]`` and ``logl[route]`` have shape
    (3 hypotheses, n_mass, n_x); NaN / 0 outside a locus. ``mass`` is the current mass of each
    locus, ``logl_tp`` the log L where the thermally pulsing AGB starts (per mass), ``logl_tip``
    the RGB tip per mass (NaN where the mass has no RGB within the age limit).
    """

    feh: float
    z: float
    mass: np.ndarray
    logt: dict
    weight: dict
    slope: dict
    logl: dict
    logl_tp: np.ndarray
    logl_tip: np.ndarray
    m_age: float
    m_hef: float
    logl_bgb_age: float


def _logt_from_lr(logl, r):
    return LOG_TSUN + 0.25 * logl - 0.5 * np.log10(r)


def _on_logg(logl_row, logt_row, w_row, logm):
    """One locus (on the log L grid) resampled on the log g grid: log T, weight per dex, log L."""
    ok = np.isfinite(logt_row) & (w_row > 0)
    out_t = np.full(_XG.size, np.nan)
    out_w = np.zeros(_XG.size)
    out_l = np.full(_XG.size, np.nan)
    if ok.sum() < 2:
        return out_t, out_w, out_l
    l, t, w = logl_row[ok], logt_row[ok], w_row[ok]
    g = LOGG_SUN + logm + 4.0 * (t - LOG_TSUN) - l
    # along a giant locus log g falls as L rises; keep the monotone part
    keep = np.r_[True, np.diff(g) < 0]
    keep &= np.minimum.accumulate(np.where(keep, g, np.inf)) == g
    l, t, w, g = l[keep], t[keep], w[keep], g[keep]
    if len(g) < 2:
        return out_t, out_w, out_l
    dldg = np.abs(np.gradient(l, g))
    gi, ti, wi, li = g[::-1], t[::-1], (w * dldg)[::-1], l[::-1]
    inside = (_XG >= gi[0]) & (_XG <= gi[-1])
    out_t[inside] = np.interp(_XG[inside], gi, ti)
    out_w[inside] = np.interp(_XG[inside], gi, wi)
    out_l[inside] = np.interp(_XG[inside], gi, li)
    return out_t, out_w, out_l


@lru_cache(maxsize=32)
def branch_grids(feh: float = 0.0, max_age_myr: float = 13800.0) -> BranchGrids:
    """The tabulated hypotheses at ``feh`` (clipped into the fits' Z range), cached in memory and
    in the stage maps' on-disk cache (built once, memory-mapped by later runs: ``stagemap/_store``)."""
    from ..stagemap import _store

    return _store.cached_record("branchgrids", {"feh": float(feh), "max_age_myr": float(max_age_myr)},
                                lambda: _build_branch_grids(feh, max_age_myr), BranchGrids)


def _build_branch_grids(feh: float, max_age_myr: float) -> BranchGrids:
    z = float(clip_z(z_from_feh(float(feh)))[0])
    c = hpt.coefficients(z)
    m_hef, m_fgb = float(c.m_hef), float(c.m_fgb)
    m = _M_GRID
    nm, nl = m.size, _XL.size
    dm = m * np.gradient(np.log(m))                      # dM of each grid mass
    tb = hpt.t_bgb(m, z)
    age_ok = tb < max_age_myr
    m_age = float(10 ** np.interp(np.log10(max_age_myr), np.log10(tb[::-1]), np.log10(m[::-1])))
    xi = kroupa2001.imf(np.maximum(m, kroupa2001.MASS_RANGE[0]))
    L = 10.0**_XL
    LL = np.broadcast_to(L, (nm, nl))
    MM = np.broadcast_to(m[:, None], (nm, nl))
    logt = np.full((N_HYP, nm, nl), np.nan)
    weight = np.zeros((N_HYP, nm, nl))
    with np.errstate(all="ignore"):
        # --- first-ascent giant branch: L_BGB .. L_HeI
        l_bgb = np.log10(hpt.l_bgb(m, z))
        l_tip = np.log10(hpt.l_hei(m, z))
        has_rgb = age_ok & (m < m_fgb)
        inside = has_rgb[:, None] & (_XL >= l_bgb[:, None]) & (_XL <= l_tip[:, None])
        r = hpt.r_gb(MM, LL, z)
        logt[0] = np.where(inside, _logt_from_lr(_XL, r), np.nan)
        mc = mc_from_luminosity(LL, MM, z)
        weight[0] = np.where(inside, (xi * dm)[:, None] * shell_burning.years_per_dex(LL, mc), 0.0)
        # --- core-helium burning
        m_init = np.maximum(m, m_age)
        low = m_init < m_hef
        mc_he = np.where(low, hpt.mc_hei(np.where(low, m_init, 1.0), z), np.nan)
        lz = hpt.l_zahb(m, mc_he, z)
        rz = hpt.r_zahb(m, mc_he, z)
        rhe = hpt.r_zhe(mc_he)
        rgz = hpt.r_gb(m, lz, z)
        f = (rz - rhe) / (rgz - rhe)
        # continuation above M_HeF: the ZAHB mix just below M_HeF, the base at L_minHe (eq 51)
        m_edge = 0.995 * m_hef
        mc_e = hpt.mc_hei(m_edge, z)
        lz_e = hpt.l_zahb(m_edge, mc_e, z)
        f_e = (hpt.r_zahb(m_edge, mc_e, z) - hpt.r_zhe(mc_e)) / (hpt.r_gb(m_edge, lz_e, z) - hpt.r_zhe(mc_e))
        hi = ~low & (m <= m_fgb)
        l_base = np.where(low, lz, np.where(hi, hpt.l_minhe(np.where(hi, m, m_hef), z), np.nan))
        f_all = np.where(low, f, f_e)
        rhe_all = np.where(low, rhe, 0.0)
        lb = np.log10(l_base)
        prior = np.where(m >= m_age, age_ok * xi * dm,
                         np.where(m >= m_age - HB_MASS_LOSS, kroupa2001.imf(max(m_age, 0.5)) * dm, 0.0))
        prior = np.where(low & ~(m > mc_he + 0.02), 0.0, prior)
        # core-He-burning lifetime: T_HE_YR, shorter in proportion to the luminosity above M_HeF
        prior = prior * T_HE_YR * np.minimum(1.0, float(lz_e) / l_base)
        inside = (prior > 0)[:, None] & np.isfinite(lb)[:, None] & (_XL >= lb[:, None] - HE_BELOW_DEX) & (
            _XL <= lb[:, None] + HE_ABOVE_DEX)
        r_he = (1.0 - f_all[:, None]) * rhe_all[:, None] + f_all[:, None] * hpt.r_gb(MM, LL, z)
        logt[1] = np.where(inside, _logt_from_lr(_XL, r_he), np.nan)
        weight[1] = np.where(inside, (prior / (HE_BELOW_DEX + HE_ABOVE_DEX))[:, None], 0.0)
        # --- asymptotic giant branch: from the end of core-He burning up
        l_tp = np.log10(luminosity_from_mc(mc_tpagb(hpt.mc_bagb(m, z)), m, z))
        top_he = lb + HE_ABOVE_DEX
        inside = (age_ok & np.isfinite(top_he))[:, None] & (_XL > top_he[:, None]) & (_XL <= 4.6)
        r_a = hpt.r_agb(MM, LL, z)
        logt[2] = np.where(inside, _logt_from_lr(_XL, r_a), np.nan)
        # time per dex: the RGB's at the same L and core mass, shortened by the faster core growth of
        # helium burning (HPT2000 eqs 68, 71; see agb_time_factor)
        fac = agb_time_factor(shell_burning.A_H, _XL[None, :] >= l_tp[:, None])
        weight[2] = np.where(inside, (xi * dm)[:, None] * shell_burning.years_per_dex(LL, mc) * fac, 0.0)
    weight[~np.isfinite(weight) | ~np.isfinite(logt)] = 0.0
    logt[weight <= 0] = np.nan
    logl_hr = np.broadcast_to(_XL, logt.shape)
    slope_hr = np.nan_to_num(np.gradient(logt, _XL, axis=2))
    # Kiel route: the same loci on the log g grid
    lg_t = np.full((N_HYP, nm, _XG.size), np.nan)
    lg_w = np.zeros((N_HYP, nm, _XG.size))
    lg_l = np.full((N_HYP, nm, _XG.size), np.nan)
    for h in range(N_HYP):
        for k in range(nm):
            if weight[h, k].any():
                lg_t[h, k], lg_w[h, k], lg_l[h, k] = _on_logg(_XL, logt[h, k], weight[h, k], np.log10(m[k]))
    slope_g = np.nan_to_num(np.gradient(lg_t, _XG, axis=2))
    return BranchGrids(
        feh=float(feh), z=z, mass=m.copy(),
        logt={"hr": logt, "kiel": lg_t}, weight={"hr": weight, "kiel": lg_w},
        slope={"hr": slope_hr, "kiel": slope_g}, logl={"hr": np.ascontiguousarray(logl_hr), "kiel": lg_l},
        logl_tp=l_tp, logl_tip=np.where(has_rgb, l_tip, np.nan), m_age=m_age, m_hef=m_hef,
        logl_bgb_age=float(np.log10(hpt.l_bgb(m_age, z))),
    )


@dataclass
class BranchResult:
    """Per-star branch outcome (arrays of length N).

    code : int8 index into :data:`hrstage.branches.BRANCHES`
    proba : (N, 3) probabilities of the hypotheses (rgb, core_he, agb); NaN for non-giants
    mass_hyp, mass_hyp_sd : (N, 3) posterior mean mass (Msun, current mass) and its spread under
        each hypothesis (prior: Kroupa IMF, constant star formation)
    """

    code: np.ndarray
    proba: np.ndarray
    mass_hyp: np.ndarray
    mass_hyp_sd: np.ndarray
    route: str
    #: per star: True where the Kiel position (log g) was used
    kiel: np.ndarray | None = None
    #: per star: distance in log Teff, in combined errors, to the nearest weighted locus point of
    #: any hypothesis (inf where none is near); a giant farther than OFF_LOCUS_NSIGMA gets no branch
    off_locus: np.ndarray | None = None

    @property
    def mass_core_he(self) -> np.ndarray:
        return self.mass_hyp[:, 1]

    def mixture_mass(self):
        """Posterior mean mass over the three hypotheses and its spread: ``sum_h p_h E[M | h]``."""
        p = np.nan_to_num(self.proba)
        mu = np.nan_to_num(self.mass_hyp)
        sd = np.nan_to_num(self.mass_hyp_sd)
        tot = p.sum(axis=1)
        with np.errstate(invalid="ignore", divide="ignore"):
            mean = (p * mu).sum(axis=1) / tot
            var = (p * (sd * sd + mu * mu)).sum(axis=1) / tot - mean * mean
        return np.where(tot > 0, mean, np.nan), np.where(tot > 0, np.sqrt(np.maximum(var, 0.0)), np.nan)

    @property
    def branch(self) -> np.ndarray:
        return np.asarray(BRANCHES, dtype=object)[self.code]

    @property
    def branch_prob(self) -> np.ndarray:
        """Probability of the named branch's hypothesis (NaN for unresolved / not giant)."""
        hyp = np.full(len(self.code), -1)
        hyp[self.code == RED_GIANT_BRANCH] = 0
        hyp[np.isin(self.code, CORE_HE_BRANCHES)] = 1
        hyp[np.isin(self.code, (EARLY_AGB, TP_AGB))] = 2
        out = np.full(len(self.code), np.nan)
        ok = hyp >= 0
        out[ok] = self.proba[np.nonzero(ok)[0], hyp[ok]]
        return out


def _cell_tables(grids, route):
    """Per hypothesis, the loci of ``grids`` on ``route`` tabulated per grid cell for :func:`_evaluate`.

    For the cell from grid point i to i + 1 of each mass: the locus log Teff at i and its change to
    i + 1 (a locus point missing on one side: the other side's value and no change; none: 0, with
    zero weight), the weight at i and its change, the slope at i, and for the AGB the log L at i and
    its change (early / thermally pulsing share). A list of (n_columns, n_mass, n_cells) arrays, one
    per hypothesis (~5 MB a grid and route); with it, per hypothesis, the running count over the
    cells of those with weight, (n_mass, n_cells + 1): the masses with weight in cells lo .. hi - 1
    are those whose count changes from lo to hi (a mass-grid stride, ``MASS_STEP``, leaves the
    skipped masses without any).

    Kept on ``grids`` from their second use on (a second chunk of a file, a second call): a run of
    one chunk over many [Fe/H] grids (a small target list) then holds one grid's tables at a time
    instead of all of them, while a long run builds each one twice at most (~4 ms).
    """
    cache = grids.__dict__.setdefault("_cell_tabs", {})
    seen = grids.__dict__.setdefault("_cell_tabs_seen", set())
    if route not in cache:
        out, counts = [], []
        for h in range(N_HYP):
            t, w = np.asarray(grids.logt[route][h]), np.asarray(grids.weight[route][h])
            t0, t1, w0, w1 = t[:, :-1], t[:, 1:], w[:, :-1], w[:, 1:]
            f0, f1 = np.isfinite(t0), np.isfinite(t1)
            cols = [np.where(f0, t0, np.where(f1, t1, 0.0)), np.where(f0 & f1, t1 - t0, 0.0), w0, w1 - w0,
                    np.asarray(grids.slope[route][h])[:, :-1]]
            if h == 2:
                lg = np.asarray(grids.logl[route][h])
                cols += [lg[:, :-1], lg[:, 1:] - lg[:, :-1]]   # NaN where either end is missing
            out.append(np.stack(cols))
            has_w = (cols[2] != 0) | (cols[3] != 0)
            has_w[np.arange(has_w.shape[0]) % MASS_STEP[h] != 0] = False
            c = np.zeros((has_w.shape[0], has_w.shape[1] + 1), dtype=np.int32)
            np.cumsum(has_w, axis=1, out=c[:, 1:])
            counts.append(c)
        out = (out, counts)
        if route not in seen:
            seen.add(route)
            return out
        cache[route] = out
    return cache[route]


def _evaluate(grids, route, x, logt, sx, st, chunk=512):
    """Evidence per hypothesis, mass mean / sd per hypothesis, early-AGB share, for positions ``x``.

    The locus of each mass is interpolated linearly in ``x`` between grid points (a point missing on
    one side: the other side's), with its weight; the slope is that of the lower grid point. Stars
    are taken in order of ``x`` in blocks of ``chunk``; a block's stars sit in few grid cells, whose
    tabulated loci are repeated over the stars of each cell (no per-star lookup), and only the loci
    with weight in those cells are evaluated.
    The result of a star never depends on the others.
    """
    n = len(x)
    xg = _XL if route == "hr" else _XG
    cells, wcount = _cell_tables(grids, route)
    out = (np.zeros((n, N_HYP)), np.full((n, N_HYP), np.nan), np.full((n, N_HYP), np.nan), np.zeros(n),
           np.full(n, np.inf))
    pos_all = (x - xg[0]) / (xg[1] - xg[0])
    inside = np.isfinite(pos_all) & (pos_all >= 0) & (pos_all < xg.size - 1)
    idx = np.flatnonzero(inside)
    idx = idx[np.argsort(pos_all[idx], kind="stable")]
    s2obs_all = np.maximum(st, SIGMA_T_FLOOR) ** 2 + SIGMA_INT**2
    sxr_all = np.sqrt(sx**2 + SIGMA_X_INT**2)
    pos_s = pos_all[idx]
    cell_s = pos_s.astype(np.intp)
    for a in range(0, len(idx), chunk):
        rows, i = idx[a:a + chunk], cell_s[a:a + chunk]
        fr = pos_s[a:a + chunk] - i
        lo_c, hi_c = int(i[0]), int(i[-1]) + 1
        counts = None if hi_c - lo_c == 1 else np.bincount(i - lo_c, minlength=hi_c - lo_c)
        star = (s2obs_all[rows], sxr_all[rows], logt[rows])
        for h in range(N_HYP):
            ks = np.flatnonzero(wcount[h][:, hi_c] != wcount[h][:, lo_c])
            if not len(ks):
                continue
            if counts is None:    # one cell: its loci broadcast over the stars
                g = cells[h][:, ks, lo_c][:, :, None]
            else:
                g = np.repeat(cells[h][:, ks, lo_c:hi_c], counts, axis=2)
            _score(g, fr, rows, h, grids.mass[ks], grids.logl_tp[ks], *star, out)
    ev, m1, m2, early, near = out
    return ev, m1, m2, early, np.sqrt(near)


def _score(g, fr, rows, h, mass, ltp, s2obs, sxr, ltr, out):
    """Score stars ``rows`` against loci ``g`` (columns x loci x stars, or x 1 for one cell) into ``out``.

    Per locus and star: ``like = w exp(-z^2 / 2) / sqrt(var)``, ``z = (log Teff - locus) / sqrt(var)``,
    ``var = s2obs + (slope sxr)^2`` (in place: the blocks are large).
    """
    ev, m1, m2, early, near = out
    d = g[1] * fr
    d += g[0]
    np.subtract(ltr, d, out=d)
    var = g[4] * sxr
    var *= var
    var += s2obs
    z2 = d
    z2 *= d
    z2 /= var
    like = np.multiply(z2, -0.5)
    np.exp(like, out=like)
    w = g[3] * fr
    w += g[2]
    if MASS_STEP[h] != 1:
        w *= MASS_STEP[h]
    like *= w
    np.sqrt(var, out=var)
    like /= var
    near[rows] = np.minimum(near[rows], np.where(like > 0, z2, np.inf).min(axis=0))
    tot = like.sum(axis=0)
    ev[rows, h] = tot
    with np.errstate(invalid="ignore", divide="ignore"):
        mu = (mass @ like) / tot
        m1[rows, h] = mu
        dm = np.subtract(mass[:, None], mu, out=var)
        dm *= dm
        dm *= like
        m2[rows, h] = np.sqrt(np.maximum(dm.sum(axis=0) / tot, 0.0))
        if h == 2:
            ll = np.multiply(g[6], fr, out=w)
            ll += g[5]
            np.less(ll, ltp[:, None], out=z2)     # 1 / 0: thermally pulsing yet or not
            z2 *= like
            early[rows] = np.where(tot > 0, z2.sum(axis=0) / tot, 0.0)


def classify_branch(logt, logl, stage_code, *, logt_err=None, logl_err=None, logg=None, logg_err=None,
                    feh=None, min_prob: float = MIN_PROB, max_age_myr: float = 13800.0,
                    giant_codes=None, independent_l=None, corr=0.0, feh_groups=None) -> BranchResult:
    """Branch of every giant-class star from its HR position (or its Kiel position when ``logg`` is given).

    Parameters
    ----------
    logt, logl : array_like
        log10 Teff (K) and log10 L (Lsun).
    stage_code : array_like of int
        ``hrstage.stages`` codes; only giant-class stars (``giant_codes``, default giant and bright
        giant) get a branch, the others ``not_giant``.
    logt_err, logl_err, logg_err : array_like, optional
        1-sigma errors (dex); missing errors count as zero.
    logg : array_like, optional
        log10 g (cgs). Where finite, the Kiel route is used for that star (log g is what
        separates the branches best); elsewhere the HR route.
    feh : float or array_like, optional
        [Fe/H]; per-star values use the nearest 0.25-dex grid point; None = solar.
    min_prob : float
        Probability a hypothesis needs for its branch to be named (else ``unresolved``).
    independent_l : bool or array_like of bool, optional
        Where True (and log g is finite), L does not come from log g, so the gravity-radius mass is
        known and a luminous star hotter than the AGB and far lighter than M_HeF is called
        ``post_agb`` whatever its stage (see :func:`_post_agb`).
    corr : float or array_like
        Correlation of the log Teff and log L errors (for that mass's error).
    feh_groups : tuple, optional
        ``(feh_used, {feh: row indices})`` as the stage classification grouped the stars by
        [Fe/H] (``_core._group_feh``), so that it is not done twice; None groups ``feh`` here.

    Returns
    -------
    BranchResult
    """
    from ._core import _group_feh

    logt = np.asarray(logt, float).ravel()
    logl = np.asarray(logl, float).ravel()
    n = logt.size
    code_in = np.broadcast_to(np.asarray(stage_code), (n,))

    def arr(v, rows=None):
        if v is None:
            return np.zeros(n if rows is None else len(rows))
        a = np.broadcast_to(np.asarray(v, float), (n,))
        return np.nan_to_num(a if rows is None else a[rows], nan=0.0)

    g = np.full(n, np.nan) if logg is None else np.broadcast_to(np.asarray(logg, float), (n,)).astype(float)
    giant_codes = (GIANT, BRIGHT_GIANT) if giant_codes is None else giant_codes
    eligible = np.isin(code_in, giant_codes) & np.isfinite(logt)
    sub = (code_in == SUBGIANT) & np.isfinite(logt) & np.isfinite(logl)
    if feh_groups is None:
        feh_used, groups, _ = _group_feh(feh, n)
    else:   # the stage classification's grouping (same [Fe/H] per star)
        feh_used, groups = feh_groups
    grid_of = {}
    for fg, idx in groups.items():
        grids = grid_of[fg] = branch_grids(round(float(fg), 4), float(max_age_myr))
        si = idx[sub[idx]]
        if len(si):   # subgiants on the lower red giant branch (see LOWER_RGB_DLOGT)
            with np.errstate(all="ignore"):
                t_rgb = _logt_from_lr(logl[si], hpt.r_gb(grids.m_age, 10.0 ** logl[si], grids.z))
            eligible[si] = (logl[si] >= grids.logl_bgb_age) & (logt[si] <= t_rgb + LOWER_RGB_DLOGT)
    kiel = eligible & np.isfinite(g)
    hr = eligible & ~kiel & np.isfinite(logl)
    # the branch work is done on the eligible stars only (suffix e: arrays over them, in row order)
    e_rows = np.flatnonzero(eligible)
    ne = len(e_rows)
    lt_e, g_e = logt[e_rows], g[e_rows]
    st_e = arr(logt_err, e_rows)
    x_e = {"kiel": (g_e, arr(logg_err, e_rows)), "hr": (logl[e_rows], arr(logl_err, e_rows))}
    route_e = {"kiel": kiel[e_rows], "hr": hr[e_rows]}
    ev = np.zeros((ne, N_HYP))
    m1 = np.full((ne, N_HYP), np.nan)
    m2 = np.full((ne, N_HYP), np.nan)
    early = np.zeros(ne)
    near_e = np.full(ne, np.inf)
    m_hef = np.full(ne, np.nan)
    fehv = np.broadcast_to(np.asarray(feh_used, float), (n,))[e_rows]
    for fg, idx in groups.items():
        grids = grid_of[fg]
        loc = np.searchsorted(e_rows, idx[eligible[idx]])      # this group's eligible stars
        m_hef[loc] = grids.m_hef
        for route in ("kiel", "hr"):
            ii = loc[route_e[route][loc]]
            if len(ii):
                x, sx = x_e[route]
                # huge (finite) errors: the variance overflows to inf and the star gets no evidence
                with np.errstate(over="ignore", invalid="ignore", under="ignore"):
                    e, a, b, ea, nz = _evaluate(grids, route, x[ii], lt_e[ii], sx[ii], st_e[ii])
                ev[ii], m1[ii], m2[ii], early[ii], near_e[ii] = e, a, b, ea, nz
    tot = ev.sum(axis=1)
    has = tot > 0
    proba_e = np.full((ne, N_HYP), np.nan)
    proba_e[has] = ev[has] / tot[has, None]
    code_e = np.full(ne, UNRESOLVED, dtype=np.int8)
    best = np.argmax(np.nan_to_num(proba_e, nan=-1.0), axis=1)
    pbest = np.nan_to_num(proba_e[np.arange(ne), best], nan=0.0)
    named = has & (pbest >= min_prob) & ~(near_e > OFF_LOCUS_NSIGMA)
    teff = 10.0**lt_e
    # horizontal branch vs blue loop: the core-He hypothesis' mass against M_HeF of the star's [Fe/H]
    heavy = m1[:, 1] >= m_hef           # NaN (no core-He evidence) counts as light
    hot = teff >= HB_TEFF_MIN
    loop = hot & heavy
    hb = ((fehv <= HB_FEH_MAX) | hot) & ~heavy
    code_e[named & (best == 0)] = RED_GIANT_BRANCH
    # Kiel route: a red clump must also be inside the Bovy et al. 2014 box (within its [Fe/H] range)
    in_cal = (fehv >= bovy2014.FEH_RANGE[0]) & (fehv <= bovy2014.FEH_RANGE[1])
    outside_box = route_e["kiel"] & in_cal & ~hb & ~loop & ~bovy2014.in_clump_box(teff, g_e, fehv)
    named &= ~((best == 1) & outside_box)
    he = named & (best == 1)
    code_e[he] = np.where(hb[he], HORIZONTAL_BRANCH, np.where(loop[he], BLUE_LOOP, RED_CLUMP))
    code_e[named & (best == 2)] = np.where(early[named & (best == 2)] >= 0.5, EARLY_AGB, TP_AGB)
    m1[~has] = np.nan
    m2[~has] = np.nan

    def spread(a, fill):     # an array over the eligible stars -> one over all rows
        out = np.full((n,) + a.shape[1:], fill, dtype=a.dtype)
        out[e_rows] = a
        return out

    code, proba, near = spread(code_e, NOT_GIANT), spread(proba_e, np.nan), spread(near_e, np.inf)
    mass_hyp, mass_sd = spread(m1, np.nan), spread(m2, np.nan)
    if independent_l is not None:
        post = _post_agb(logt, logl, g, arr(logt_err), arr(logl_err), arr(logg_err), corr, independent_l,
                         groups, grid_of)
        code[post] = POST_AGB
        proba[post] = np.nan
        mass_hyp[post] = np.nan
        mass_sd[post] = np.nan
    return BranchResult(code=code, proba=proba, mass_hyp=mass_hyp, mass_hyp_sd=mass_sd, off_locus=near,
                        route="kiel" if kiel.any() and not hr.any() else ("hr" if hr.any() and not kiel.any() else "mixed"),
                        kiel=kiel)


def _post_agb(logt, logl, g, st, sl, sg, corr, independent_l, groups, grid_of):
    """Stars that can only be post-AGB: luminous, hotter than the AGB, far too light for anything else.

    Needs log g and an L independent of it (the gravity-radius mass). A star is called post-AGB when

    - it is brighter than the RGB tip of the age-limit mass (HPT2000 eq 49): above it a star lighter
      than M_HeF is on the AGB or beyond it (HPT2000's phases), anything else is heavier;
    - it is hotter than every AGB locus at its L (eq 74, the hottest mass) by more than
      :data:`POST_AGB_DLOGT` and by more than :data:`POST_AGB_NSIGMA` times its log Teff width
      (the star's error floored at :data:`SIGMA_T_FLOOR`, with :data:`SIGMA_INT`);
    - its mass g R^2 / G lies :data:`POST_AGB_NSIGMA` errors below M_HeF (HPT2000 eq 2): a star that
      luminous and hot on any other phase (crossing to or looping from the giant branch) has to be
      heavier than M_HeF, while a post-AGB star is the bare CO core of its progenitor, ~0.5-0.7 Msun.

    Whatever the stage: the stage comes from the HR position alone, which places the hotter part
    of the post-AGB crossing on the upper main sequence, among hot subdwarfs or nowhere; the
    ``branch`` column then says what the mass shows. From the HR position alone (no log g) the
    mass is unknown and these stars keep their stage's branch. Indicative: a post-RGB star (a giant
    stripped by a companion) or a binary post-AGB star with a misjudged L look alike.
    """
    n = len(logt)
    rows = np.broadcast_to(np.asarray(independent_l, dtype=bool), (n,))
    cand = rows & np.isfinite(logt) & np.isfinite(logl) & np.isfinite(g)
    out = np.zeros(n, dtype=bool)
    if not cand.any():
        return out
    m, me = gravity_mass(logt, logl, g, st, sl, sg, corr)
    width = np.sqrt(np.maximum(st, SIGMA_T_FLOOR) ** 2 + SIGMA_INT**2)
    for fg, idx in groups.items():
        ii = idx[cand[idx]]
        if not len(ii):
            continue
        grids = grid_of.get(fg) or branch_grids(round(float(fg), 4))
        k_age = min(int(np.searchsorted(grids.mass, grids.m_age)), len(grids.mass) - 1)
        tip = grids.logl_tip[k_age]
        with np.errstate(all="ignore"):
            agb_hot = np.fmax.reduce(grids.logt["hr"][2], axis=0)       # hottest AGB locus per log L
        have = np.isfinite(agb_hot)
        if not have.any() or not np.isfinite(tip):
            continue
        # beyond the top of the AGB grid keep its last temperature (the AGB cools as L rises)
        t_agb = np.interp(logl[ii], _XL[have], agb_hot[have])
        out[ii] = ((logl[ii] > tip) & (logt[ii] - t_agb > np.maximum(POST_AGB_NSIGMA * width[ii], POST_AGB_DLOGT))
                   & (m[ii] + POST_AGB_NSIGMA * me[ii] < grids.m_hef))
    return out


_HYP_WORDS = ("first-ascent red giant branch", "core-helium burning", "asymptotic giant branch")


def branch_text(b: BranchResult, i: int) -> str:
    """One line saying which branch star ``i`` is on, with the three probabilities and the route."""
    code = int(b.code[i])
    if code == NOT_GIANT:
        return "Branch: not_giant (only giant-class stars get a branch)"
    if code == POST_AGB:
        return ("Branch: post_agb -- brighter than the RGB tip, hotter than every AGB locus and a gravity-"
                "radius mass (g R^2 / G) far below M_HeF: only a bare post-AGB core fits (indicative)")
    p = b.proba[i]
    if not np.isfinite(p).all():
        return "Branch: unresolved -- no branch locus (RGB, core-He band, AGB) passes near this position"
    if b.off_locus is not None and b.off_locus[i] > OFF_LOCUS_NSIGMA:
        return (f"Branch: unresolved -- {b.off_locus[i]:.0f} sigma in Teff from the nearest branch locus (RGB, "
                "core-He band, AGB): a position the loci do not reach (Hertzsprung gap, blue loop, "
                "instability strip)")
    route = "Kiel position (Teff, log g)" if b.kiel is not None and b.kiel[i] else "HR position (Teff, L)"
    probs = ", ".join(f"{w} {q:.2f}" for w, q in zip(_HYP_WORDS, p))
    return (f"Branch: {BRANCHES[code]} -- from the {route}: {probs} (HPT2000 loci weighed over a Kroupa-IMF, "
            "constant-star-formation population; the branch is named at >= 0.5)")


def branch_curves(feh: float = 0.0, max_age_myr: float = 13800.0) -> dict:
    """The branch loci at ``feh`` as curves ``name -> (label, mass, logt, logl)`` (plain arrays).

    ``branch_rgb_oldest`` / ``branch_rgb_2msun``: first-ascent giant branch of the lightest evolved
    mass and of 2 Msun (HPT2000 eqs 10, 46, 49); ``branch_core_he_lower`` / ``_upper``: faint and
    bright edges of the core-He band per mass (eqs 51, 53-54, -HE_BELOW_DEX / +HE_ABOVE_DEX);
    ``branch_rgb_tip``: the tip luminosity of the oldest stars (eq 49) across the cool giants.
    """
    g = branch_grids(round(float(feh), 4), float(max_age_myr))
    lgrid = g.logl["hr"][0, 0]
    out = {}
    k_old = int(np.searchsorted(g.mass, g.m_age))
    for name, k in (("branch_rgb_oldest", k_old), ("branch_rgb_2msun", int(np.argmin(np.abs(g.mass - 2.0))))):
        t = g.logt["hr"][0, k]
        ok = np.isfinite(t)
        out[name] = (f"First-ascent giant branch of {g.mass[k]:.2f} Msun (HPT2000 eqs 10, 46, 49)",
                     np.full(ok.sum(), g.mass[k]), t[ok], lgrid[ok])
    t_he = g.logt["hr"][1]
    lo, hi = [], []
    for k in range(len(g.mass)):
        ok = np.flatnonzero(np.isfinite(t_he[k]))
        if len(ok) >= 2:
            lo.append((g.mass[k], t_he[k, ok[0]], lgrid[ok[0]]))
            hi.append((g.mass[k], t_he[k, ok[-1]], lgrid[ok[-1]]))
    for name, pts, what in (("branch_core_he_lower", lo, f"-{HE_BELOW_DEX:g}"), ("branch_core_he_upper", hi, f"+{HE_ABOVE_DEX:g}")):
        a = np.array(pts, dtype=float).reshape(-1, 3)
        out[name] = (f"Core-He-burning band edge (ZAHB / minimum core-He luminosity {what} dex; HPT2000 eqs 51, 53-54)",
                     a[:, 0], a[:, 1], a[:, 2])
    tip = g.logl_tip[k_old]
    tt = np.linspace(3.45, 3.75, 31)
    out["branch_rgb_tip"] = (f"RGB tip of {g.mass[k_old]:.2f} Msun (HPT2000 eq 49): cool giants above are AGB",
                             np.full(tt.size, g.mass[k_old]), tt, np.full(tt.size, tip))
    return out


def branch_columns(b: BranchResult, coded: bool = False) -> dict:
    """The branch columns (names of ``hrstage.columns``) of a :class:`BranchResult`."""
    from ._text import CodedText

    out = {"branch": CodedText(BRANCHES, b.code) if coded else b.branch, "branch_prob": b.branch_prob}
    for k, h in enumerate(HYPOTHESES):
        out[f"prob_{h}"] = b.proba[:, k]
    return out


def gravity_mass(logt, logl, logg, logt_err=0.0, logl_err=0.0, logg_err=0.0, corr=0.0):
    """``M = g R^2 / G`` with ``R^2 = L / (4 pi sigma Teff^4)``: mass (Msun) and its 1-sigma error.

    ``log M = log g - log g_sun + log L - 4 (log Teff - log Teff_sun)`` (IAU 2015 nominal solar
    values); the error propagates the three log errors to first order with the correlation of the
    log Teff and log L errors: ``var(log M) = s_g^2 + s_L^2 + 16 s_T^2 - 8 rho s_L s_T``.
    """
    logm = logg - LOGG_SUN + logl - 4.0 * (logt - LOG_TSUN)
    var = logg_err**2 + logl_err**2 + 16.0 * logt_err**2 - 8.0 * corr * logl_err * logt_err
    m = 10.0**logm
    return m, m * np.log(10.0) * np.sqrt(np.maximum(var, 0.0))


def attach_branch(res, *, logg=None, logg_err=None, feh=None, shape=None, max_age_myr=13800.0,
                  gravity=True, feh_groups=None):
    """Decide the branch of the giants of a ``ClassificationResult`` and make their masses branch-aware.

    Sets ``res.branch``; for giant-class stars with a branch evaluation (and no supplied mass) the
    mass becomes the posterior mean mass of the most probable hypothesis (methods
    ``red_giant_branch``, ``core_he_burning``, ``agb``); where log g and an independent L are both
    known (``gravity`` True, or True for the row) the mass is ``g R^2 / G`` (``gravity_radius``),
    for every stage.
    """
    from ._core import MASS_METHOD_NAMES

    n = len(res.code)

    def flat(v):
        if v is None:
            return None
        a = np.asarray(v, dtype=float)
        if shape is not None and a.shape != (n,):
            a = np.broadcast_to(a, shape)
        return np.broadcast_to(a.ravel() if a.size == n else a, (n,)).astype(float)

    g, ge = flat(logg), flat(logg_err)
    indep = None if g is None else np.broadcast_to(np.asarray(gravity, dtype=bool), (n,))
    if g is not None:   # blue horizontal branch or main sequence: the gravity-radius mass decides
        from ._core import resolve_hb_or_ms
        resolve_hb_or_ms(res, g, ge, indep)
    b = classify_branch(res.logt, res.logl, res.code, logt_err=res.logt_err, logl_err=res.logl_err,
                        logg=g, logg_err=ge, feh=res.feh_used if feh is not None and np.ndim(feh) else feh,
                        max_age_myr=max_age_myr, independent_l=indep, corr=res.corr, feh_groups=feh_groups)
    res.branch = b
    supplied = MASS_METHOD_NAMES.index("supplied")
    first = MASS_METHOD_NAMES.index(BRANCH_MASS_METHODS[0])
    r = np.flatnonzero(np.isfinite(b.proba[:, 0]))     # stars with a branch evaluation
    best = np.argmax(np.nan_to_num(b.proba[r], nan=-1.0), axis=1)
    mb = b.mass_hyp[r, best]
    use = np.isfinite(mb) & (res.mass_code[r] != supplied)
    ru = r[use]
    res.mass[ru] = mb[use]
    res.mass_err[ru] = b.mass_hyp_sd[ru, best[use]]
    res.mass_code[ru] = first + best[use]
    if g is not None:
        rows = np.broadcast_to(np.asarray(gravity, dtype=bool), (n,))
        ge0 = np.zeros(n) if ge is None else np.nan_to_num(ge)
        m, me = gravity_mass(res.logt, res.logl, g, res.logt_err, res.logl_err, ge0, res.corr)
        ok = rows & np.isfinite(m) & (res.mass_code != supplied)
        res.mass[ok] = m[ok]
        res.mass_err[ok] = me[ok]
        res.mass_code[ok] = MASS_METHOD_NAMES.index("gravity_radius")
    return b


__all__ = ["classify_branch", "attach_branch", "branch_curves", "branch_text", "branch_columns", "gravity_mass", "BRANCH_MASS_METHODS", "branch_grids", "BranchGrids", "BranchResult", "MIN_PROB", "SIGMA_INT", "SIGMA_X_INT", "SIGMA_T_FLOOR"]
