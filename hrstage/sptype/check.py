"""Does a catalogued MK type agree with the star's HR-diagram position?

For every star with a parsed type and an HR position (log Teff, log L) two questions are asked of
the calibration (:mod:`hrstage.sptype.calibration`):

* temperature: is the measured Teff within the scatter of the Teff expected for the type in its
  class? ``nsigma_teff = max(0, |logt - logT_cal| - w_T) / sqrt(s_T^2 + logt_err^2)``, with
  ``w_T`` half the span of a type range (R13) and ``s_T`` the class scatter (x1.5 when the type
  carries an uncertainty mark);
* luminosity: is log L within the scatter of the class sequence *at the measured Teff*?
  ``nsigma_lum = |logl - logL_c(logt)| / sqrt(s_L^2 + logl_err^2 + (slope * logt_err)^2)``.
  Dwarfs up to :data:`~hrstage.sptype.calibration.BINARY_ALLOWANCE_DEX` above the class-V
  sequence are not counted (possible unresolved binary). A class range (``IV-V``) passes if any
  class in it passes; Ia, Iab and Ib are tested together (their calibrations overlap, note §3.5);
  a hypergiant (``0``) must be at least as bright as the Ia sequence; a cool subdwarf (``VI``/
  ``sd``) at most as bright as the V sequence.

Verdicts (our own names)
------------------------
``consistent``
    both checks within ``threshold`` sigma (default 3).
``lumclass_conflict``
    luminosity class disagrees with the HR position (for a type with no class: no class fits).
``tclass_conflict``
    measured Teff disagrees with the temperature type.
``tclass_and_lumclass_conflict``
    both.
``not_checkable:<why>``
    ``no_type`` (empty), ``unparsed``, ``no_hr_position`` (Teff or L missing), ``no_calibration``
    (white dwarf, hot subdwarf, Wolf–Rayet, carbon, S, special entries), ``no_lumclass`` (R14:
    no class in the type, every class tested, the best one reported as suggested, Teff checked),
    ``outside_calibration`` (the class sequence does not reach the star's Teff or type),
    ``stage_undecided`` (stage check: the HR stage is neither expected nor excluded).
``stage_conflict``
    stage check (white dwarfs, hot and cool subdwarfs, WR, carbon, S stars, and ordinary types
    with no class sequence at the star's Teff): the HR-position stage is one the type excludes.

The suggested class is the calibrated class (Ia … V) whose sequence at the measured Teff is nearest
in sigma units; ``VI`` when the star lies more than ``threshold`` sigma below the V sequence, and
``D`` when it lies more than 2 dex below it (white-dwarf region). All of this is indicative: a
conflict may come from the type, the parallax, extinction, binarity or the calibration itself, and
does not replace a spectroscopic analysis.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .. import flags as _flags
from ..columns import SPTYPE_COLUMNS
from ..errors import HrstageInputError
from ..models import giant_bv_turnover
from .calibration import BINARY_ALLOWANCE_DEX, CLASS_NUMBER, calibration, sigma_logl, sigma_logt
from .lumclass import CHECK_CLASSES, expected_stage
from .parser import SpType, parse_many

__all__ = ["TypeCheck", "check_types", "summarise_checks", "class_separation", "VERDICTS"]

VERDICTS = (
    "consistent",
    "lumclass_conflict",
    "tclass_conflict",
    "tclass_and_lumclass_conflict",
    "not_checkable:no_type",
    "not_checkable:unparsed",
    "not_checkable:no_hr_position",
    "not_checkable:no_calibration",
    "not_checkable:no_lumclass",
    "not_checkable:outside_calibration",
    "stage_conflict",
    "not_checkable:stage_undecided",
)

#: stage order used to judge how far an HR stage is from the stage a class implies
_STAGE_STEP = {"subdwarf": 0, "main_sequence": 1, "subgiant": 2, "giant": 3, "bright_giant": 4, "supergiant": 5,
               # young stars above the main sequence: luminosity class V-IV (T Tauri, Herbig Ae/Be stars)
               "pre_main_sequence": 1.5}

#: stage check of the kinds with no MK calibration: (expected stages, excluded stages); an HR
#: stage in neither set leaves the type not checkable ("stage_undecided"). Our choices, from the
#: usual places of these families on the HR diagram (common practice): WR stars are evolved massive
#: stars (but H-rich WNh stars still burn hydrogen, and hot WR stars lie left of the ZAMS, outside
#: the stage map), carbon and S stars are AGB/giant-branch stars (dwarf carbon stars excepted).
_STAGE_RULES = {
    "white_dwarf": ({"white_dwarf"}, {"main_sequence", "subgiant", "giant", "bright_giant", "supergiant",
                                      "subdwarf", "pre_main_sequence"}),
    "hot_subdwarf": ({"hot_subdwarf"}, {"main_sequence", "subgiant", "giant", "bright_giant", "supergiant",
                                        "white_dwarf", "subdwarf", "pre_main_sequence"}),
    "cool_subdwarf": ({"subdwarf", "main_sequence"}, {"giant", "bright_giant", "supergiant", "white_dwarf",
                                                      "hot_subdwarf"}),
    "wolf_rayet": ({"supergiant", "bright_giant"}, {"white_dwarf", "subdwarf", "hot_subdwarf", "subgiant",
                                                    "main_sequence (log L < 4.5)"}),
    "carbon": ({"giant", "bright_giant", "supergiant"}, {"main_sequence", "white_dwarf", "subdwarf",
                                                         "hot_subdwarf"}),
    "s_type": ({"giant", "bright_giant", "supergiant"}, {"main_sequence", "white_dwarf", "subdwarf",
                                                         "hot_subdwarf"}),
}
_WR_MIN_LOGL = 4.5
_STAGE_FAMILY_TEXT = {"white_dwarf": "white dwarf", "hot_subdwarf": "hot subdwarf", "cool_subdwarf": "cool subdwarf",
                      "wolf_rayet": "Wolf-Rayet star", "carbon": "carbon star", "s_type": "S star"}

_NC = len(CHECK_CLASSES)
_UNCERTAIN_FACTOR = 1.5
_SUPERGIANTS = ("Ia", "Iab", "Ib")


@dataclass
class TypeCheck:
    """Result of :func:`check_types`: one entry per star, in input order.

    Attributes
    ----------
    sptypes : ndarray of SpType
    verdict, lumclass, stage, suggested, parsed : ndarray of str
    nsigma : ndarray of float
        Size of the disagreement of the catalogued type (the larger of ``nsigma_teff`` and
        ``nsigma_lum`` where both exist), in units of the calibration scatter.
    nsigma_teff, nsigma_lum : ndarray of float
        The two checks separately (NaN where not made).
    expected_logt, expected_logl : ndarray of float
        Calibrated log Teff of the type and log L of the class sequence at the measured Teff, for
        the class that fitted best among those the type allows.
    flags : ndarray of int64
        ``SPTYPE_CONFLICT`` / ``SPTYPE_UNPARSED`` bits of :mod:`hrstage.flags`.
    threshold : float
    reason : ndarray of str
        Readable basis of the verdict (which check, expected vs HR-position stage).
    hr_stage : ndarray of str
        Stage of the HR position on the stage map (only where the stage check was made, else '').
    """

    sptypes: np.ndarray
    verdict: np.ndarray
    lumclass: np.ndarray
    stage: np.ndarray
    suggested: np.ndarray
    parsed: np.ndarray
    nsigma: np.ndarray
    nsigma_teff: np.ndarray
    nsigma_lum: np.ndarray
    expected_logt: np.ndarray
    expected_logl: np.ndarray
    flags: np.ndarray
    threshold: float = 3.0
    notes: dict = field(default_factory=dict)
    reason: np.ndarray | None = None
    hr_stage: np.ndarray | None = None

    def __len__(self) -> int:
        return len(self.verdict)

    @property
    def is_conflict(self) -> np.ndarray:
        """True where the verdict is one of the conflicts."""
        return np.char.endswith(self.verdict.astype(str), "conflict")

    def to_columns(self) -> dict:
        """The output columns of :data:`hrstage.columns.SPTYPE_COLUMNS`, as plain arrays."""
        cols = {
            "sptype_parsed": self.parsed.astype(str),
            "sptype_lumclass": self.lumclass.astype(str),
            "sptype_stage": self.stage.astype(str),
            "sptype_verdict": self.verdict.astype(str),
            "sptype_suggested": self.suggested.astype(str),
            "sptype_nsigma": self.nsigma.astype(float),
            "sptype_reason": (self.reason if self.reason is not None else np.full(len(self), "")).astype(str),
        }
        assert tuple(cols) == SPTYPE_COLUMNS
        return cols


# ---------------------------------------------------------------------------------------------
# per-distinct-type properties
# ---------------------------------------------------------------------------------------------

_KIND_CODE = {"mk": 0, "am_ap": 0}  # everything else -> not calibrated


def _type_table(types: list[SpType]) -> dict:
    """Arrays describing each distinct parsed type (loop over distinct types only)."""
    n = len(types)
    out = {
        "missing": np.zeros(n, bool),
        "unparsed": np.zeros(n, bool),
        "calibrated": np.zeros(n, bool),
        "num_lo": np.full(n, np.nan),
        "num_hi": np.full(n, np.nan),
        "allowed": np.zeros((n, _NC), bool),
        "has_class": np.zeros(n, bool),
        "hyper": np.zeros(n, bool),
        "subdwarf": np.zeros(n, bool),
        "t_unc": np.zeros(n, bool),
        "l_unc": np.zeros(n, bool),
        "lumclass": np.empty(n, dtype=object),
        "parsed": np.empty(n, dtype=object),
        "stage": np.empty(n, dtype=object),
        "family": np.full(n, "", dtype=object),
    }
    nums = np.array([CLASS_NUMBER[c] for c in CHECK_CLASSES])
    for j, p in enumerate(types):
        out["lumclass"][j] = p.lumclass
        out["parsed"][j] = p.normalised
        out["stage"][j] = expected_stage(p.lumclass)
        if not p.ok:
            if p.reason.startswith("no spectral type") or p.reason.startswith("empty"):
                out["missing"][j] = True
            else:
                out["unparsed"][j] = True
            continue
        out["calibrated"][j] = p.kind in _KIND_CODE and np.isfinite(p.numeric)
        if p.kind in _STAGE_RULES:
            out["family"][j] = p.kind
        elif p.lumclass in ("sdO", "sdB", "sdOB") or (np.isfinite(p.lum_range[0]) and p.lum_range[0] >= 7.75):
            out["family"][j] = "hot_subdwarf"
        elif p.lumclass in ("VI", "sd") or (np.isfinite(p.lum_range[0]) and p.lum_range[0] >= 6.75):
            out["family"][j] = "cool_subdwarf"
        out["num_lo"][j], out["num_hi"][j] = p.t_range
        out["t_unc"][j] = p.temp_uncertain
        out["l_unc"][j] = p.lum_uncertain
        lo, hi = p.lum_range
        if np.isfinite(lo):
            out["has_class"][j] = True
            if hi <= 0.0:  # hypergiant
                out["hyper"][j] = True
                out["allowed"][j] = [c == "Ia" for c in CHECK_CLASSES]
            elif lo >= 6.75:  # VI and fainter
                out["subdwarf"][j] = True
                out["allowed"][j] = [c == "V" for c in CHECK_CLASSES]
                if lo >= 7.75:  # VII/VIII hot-subdwarf classes: not on these sequences
                    out["calibrated"][j] = False
            else:
                allowed = (nums >= lo - 0.26) & (nums <= hi + 0.26)
                if not allowed.any():
                    allowed = np.abs(nums - (lo + hi) / 2) == np.abs(nums - (lo + hi) / 2).min()
                if allowed[list(CHECK_CLASSES).index("Ia"):list(CHECK_CLASSES).index("Ib") + 1].any():
                    for c in _SUPERGIANTS:  # sub-classes overlap: test them together
                        allowed[CHECK_CLASSES.index(c)] = True
                out["allowed"][j] = allowed
        else:
            out["allowed"][j] = True
    return out


def _as_float(x, n: int, name: str) -> np.ndarray:
    if x is None:
        return np.zeros(n)
    a = np.asarray(getattr(x, "value", x), dtype=float)
    if a.ndim == 0:
        a = np.full(n, float(a))
    if a.shape != (n,):
        raise HrstageInputError(f"{name}: expected {n} values (one per star), got shape {a.shape}")
    return a


def check_types(sptypes, logt, logl, *, logt_err=None, logl_err=None, feh=None, threshold: float = 3.0,
                logg=None, logg_err=None, hr_flags=None) -> TypeCheck:
    """Check catalogued MK types against HR positions.

    Parameters
    ----------
    sptypes : array-like of str or SpType
        The catalogue's type strings (parsed here, each distinct string once) or parsed types.
    logt, logl : array-like of float
        log10 Teff/K and log10 L/Lsun of each star (NaN = no HR position).
    logt_err, logl_err : array-like of float, optional
        1-sigma errors of ``logt`` and ``logl`` (default 0: only the calibration scatter counts).
    feh : array-like of float, optional
        [Fe/H]. Selects the stage map of the stage check (solar when None); the shipped MK
        calibrations are solar-neighbourhood means and are not shifted with metallicity.
    threshold : float, default 3.0
        Number of sigma beyond which a check fails.
    logg, logg_err : array-like of float, optional
        log10 g (cgs) and its error. Where given, the luminosity class is checked on the Kiel
        position: the class sequence's L at the measured Teff with the stage map's mass there gives
        the class's log g (``log g_sun + log M + 4 log(Teff/Teff_sun) - log L``), compared with the
        measured log g (calibration L scatter and the log g error). Gravity is what separates
        O-F dwarfs from giants, which the HR position cannot.
    hr_flags : array-like of int, optional
        Flag bits of the HR positions (:mod:`hrstage.flags`). Where ``COLOUR_SATURATED`` is set
        (a giant's B-V that late-M giants share, :mod:`hrstage.models.giant_bv_turnover`) the
        colour has two Teff readings, and the type's Teff passes the temperature check if it fits
        either: the measured Teff, or the late-M giant range 3000-3650 K.

    Returns
    -------
    TypeCheck
    """
    if not np.isfinite(threshold) or threshold <= 0:
        raise HrstageInputError(f"threshold: expected a positive number of sigma, got {threshold!r}")
    logt = np.atleast_1d(np.asarray(getattr(logt, "value", logt), dtype=float))
    n = len(logt)
    logl = _as_float(logl, n, "logl")
    et = np.abs(_as_float(logt_err, n, "logt_err"))
    el = np.abs(_as_float(logl_err, n, "logl_err"))
    et = np.where(np.isfinite(et), et, 0.0)
    el = np.where(np.isfinite(el), el, 0.0)
    # feh is not used by the shipped MK calibration; it selects the stage map of the stage check

    sp = np.asarray(sptypes, dtype=object) if not isinstance(sptypes, np.ndarray) else sptypes
    if len(sp) != n:
        raise HrstageInputError(f"sptypes: expected {n} values (one per star), got {len(sp)}")
    parsed = sp if (n and isinstance(sp.ravel()[0], SpType) and all_sptype(sp)) else parse_many(sp)
    keys = _keys(parsed)
    uniq, first, inverse = np.unique(keys, return_index=True, return_inverse=True)
    inverse = inverse.ravel()
    tt = _type_table([parsed[i] for i in first])

    cal = calibration()
    g_in = _as_float(logg, n, "logg") if logg is not None else np.full(n, np.nan)
    ge = np.abs(_as_float(logg_err, n, "logg_err")) if logg_err is not None else np.zeros(n)
    ge = np.where(np.isfinite(ge), ge, 0.0)
    kiel = np.flatnonzero(np.isfinite(g_in) & np.isfinite(logt)) if logg is not None else None
    calibrated = tt["calibrated"][inverse]
    num_lo = tt["num_lo"][inverse]
    num_hi = tt["num_hi"][inverse]
    num_mid = 0.5 * (num_lo + num_hi)
    allowed = tt["allowed"][inverse]
    has_class = tt["has_class"][inverse]
    t_fac = np.where(tt["t_unc"][inverse], _UNCERTAIN_FACTOR, 1.0)
    l_fac = np.where(tt["l_unc"][inverse], _UNCERTAIN_FACTOR, 1.0)
    hyper = tt["hyper"][inverse]
    subdw = tt["subdwarf"][inverse]
    hr_ok = np.isfinite(logt) & np.isfinite(logl)
    two_t = np.zeros(n, dtype=bool) if hr_flags is None else (
        (np.asarray(hr_flags, dtype=np.int64).reshape(-1) & _flags.COLOUR_SATURATED) != 0)
    if two_t.shape != (n,):
        raise HrstageInputError(f"hr_flags: expected {n} values (one per star), got {two_t.shape}")
    with np.errstate(invalid="ignore"):   # a red giant's colour only (the flag also marks O-B Gaia colours)
        two_t &= logt <= giant_bv_turnover.LOGT_TURNOVER + 1e-9
    alt_t = np.zeros((n, _NC), dtype=bool)   # the type's Teff fits only the late-M reading
    et_hot = np.sqrt(np.maximum(et**2 - giant_bv_turnover.widened_logt_sigma(logt, two_t) ** 2, 0.0))

    nsig_t = np.full((n, _NC), np.nan)
    nsig_l = np.full((n, _NC), np.nan)  # signed: + brighter than the sequence
    exp_t = np.full((n, _NC), np.nan)
    exp_l = np.full((n, _NC), np.nan)
    for k, cls in enumerate(CHECK_CLASSES):  # loop over the 7 calibrated classes only
        lt_mid = cal.logt(num_mid, cls)
        lt_lo = cal.logt(num_lo, cls)
        lt_hi = cal.logt(num_hi, cls)
        # a range partly outside the table: use the ends that exist
        ends = np.where(np.isfinite(lt_lo), lt_lo, lt_hi)
        lt_mid = np.where(np.isfinite(lt_mid), lt_mid, ends)
        half = 0.5 * np.abs(np.where(np.isfinite(lt_lo), lt_lo, lt_mid) - np.where(np.isfinite(lt_hi), lt_hi, lt_mid))
        st = sigma_logt(cls, num_mid) * t_fac
        dt = np.maximum(0.0, np.abs(logt - lt_mid) - half)
        # a saturated colour's widened error allows cooler stars only: not on the hot side
        nsig_t[:, k] = dt / np.hypot(st, np.where(lt_mid > logt, et_hot, et))
        if two_t.any():   # a saturated giant colour: the late-M reading is the other candidate
            lo, hi = giant_bv_turnover.LOGT_RANGE
            d_alt = np.maximum(0.0, np.abs(lt_mid - np.clip(lt_mid, lo, hi)) - half)
            n_alt = np.where(two_t, d_alt / np.hypot(st, et_hot), np.inf)
            alt_t[:, k] = n_alt < nsig_t[:, k]
            nsig_t[:, k] = np.fmin(nsig_t[:, k], n_alt)
        exp_t[:, k] = lt_mid

        locus = cal.locus_logl(logt, cls)
        slope = cal.locus_slope(logt, cls)
        resid = logl - locus
        if cls == "V":
            resid = np.where(resid > 0, np.maximum(0.0, resid - BINARY_ALLOWANCE_DEX), resid)
        if cls == "III":
            # class III spans the first-ascent giant branch up to its tip: a giant brighter than
            # the class's mean sequence but on the giant branch below the tip is not a conflict
            up = np.flatnonzero(np.isfinite(resid) & (resid > 0))
            resid[up[_on_giant_branch(logt, logl, feh, up)]] = 0.0
        sl = sigma_logl(cls, num_mid) * l_fac
        nsig_l[:, k] = resid / np.sqrt(sl**2 + el**2 + (slope * et) ** 2)
        exp_l[:, k] = locus
        if kiel is not None and len(kiel):
            # Kiel position: log g of the class sequence at the measured Teff (+ brighter = lower g)
            g_cls = _class_logg(logt[kiel], locus[kiel], feh, kiel)
            resid_g = g_cls - g_in[kiel]
            if cls == "V":
                resid_g = np.where(resid_g > 0, np.maximum(0.0, resid_g - BINARY_ALLOWANCE_DEX), resid_g)
            nsig_l[kiel, k] = resid_g / np.sqrt(sl[kiel] ** 2 + ge[kiel] ** 2 + (4.0 * et[kiel]) ** 2)

    with np.errstate(invalid="ignore"):
        # one-sided classes
        iv = CHECK_CLASSES.index("V")
        ia = CHECK_CLASSES.index("Ia")
        lum_given = np.abs(nsig_l)
        lum_given = np.where(allowed, lum_given, np.nan)
        lum_given[hyper, ia] = np.maximum(0.0, -nsig_l[hyper, ia])
        lum_given[subdw, iv] = np.maximum(0.0, nsig_l[subdw, iv])
        t_given = np.where(allowed, nsig_t, np.nan)
        # a class with a Teff calibration but no sequence at this Teff (e.g. IV later than K1):
        # keep its Teff check, its luminosity check is missing
        best_l = _nanargmin(lum_given)
        nl = _take(lum_given, best_l)
        best_t = _nanargmin(t_given)
        nt = _take(t_given, best_t)

        # suggested class: nearest sequence in sigma units at the measured Teff
        sugg_k = _nanargmin(np.abs(nsig_l))
        suggested = np.where(sugg_k >= 0, np.asarray(CHECK_CLASSES, dtype=object)[np.maximum(sugg_k, 0)], "")
        dv = logl - exp_l[:, iv]
        below_v = np.isfinite(nsig_l[:, iv]) & (nsig_l[:, iv] < -threshold)
        suggested = np.where(below_v, "VI", suggested)
        suggested = np.where(np.isfinite(dv) & (dv < -2.0), "D", suggested)
        suggested = np.where(hr_ok, suggested, "")

        t_bad = np.isfinite(nt) & (nt > threshold)
        l_bad = np.isfinite(nl) & (nl > threshold)
        l_none = ~np.isfinite(nl)

    verdict = np.full(n, "consistent", dtype=object)
    verdict[t_bad & ~l_bad] = "tclass_conflict"
    verdict[l_bad & ~t_bad] = "lumclass_conflict"
    verdict[l_bad & t_bad] = "tclass_and_lumclass_conflict"
    verdict[~t_bad & l_none] = "not_checkable:outside_calibration"
    verdict[~has_class & ~t_bad & ~l_bad] = "not_checkable:no_lumclass"
    verdict[~calibrated] = "not_checkable:no_calibration"
    verdict[~hr_ok] = "not_checkable:no_hr_position"
    verdict[tt["unparsed"][inverse]] = "not_checkable:unparsed"
    verdict[tt["missing"][inverse]] = "not_checkable:no_type"

    reason = np.where(calibrated & hr_ok & np.char.startswith(verdict.astype(str), "not_checkable") == False,  # noqa: E712
                      "MK calibration: Teff of the type and L of the class sequence at the measured Teff", "")
    if kiel is not None and len(kiel):
        on_k = np.zeros(n, dtype=bool)
        on_k[kiel] = True
        reason = np.where(on_k & (reason != ""), "MK calibration: Teff of the type and log g of the class "
                          "sequence at the measured Teff (Kiel position)", reason)
    used_alt = _take(alt_t.astype(float), best_t) == 1.0
    reason = np.where(used_alt & (reason != ""), np.char.add(reason.astype(str), (
        "; B-V saturated (late-M giants turn bluer): the type's Teff fits the 3000-3650 K M-giant reading "
        "of the colour")), reason)
    reason = reason.astype(object)
    hr_stage = _stage_check(verdict, reason, tt, inverse, logt, logl, et, el, feh, hr_ok)
    _young_check(verdict, reason, tt, inverse, logt, logl, feh, hr_ok, hr_stage)

    checked = calibrated & hr_ok
    nsigma = np.where(checked, np.fmax(nt, nl), np.nan)
    nsigma_t = np.where(checked, nt, np.nan)
    nsigma_l = np.where(checked, nl, np.nan)
    bl = np.where(best_l >= 0, best_l, np.maximum(best_t, 0))
    expected_logt = np.where(checked, _take(exp_t, np.where(best_t >= 0, best_t, bl)), np.nan)
    expected_logl = np.where(checked, _take(exp_l, bl), np.nan)
    suggested = np.where(checked | (hr_ok & ~tt["unparsed"][inverse] & ~tt["missing"][inverse]), suggested, "")

    fl = np.zeros(n, dtype=np.int64)
    verdict_s = verdict.astype(str)
    fl[np.char.endswith(verdict_s, "conflict")] |= _flags.SPTYPE_CONFLICT
    fl[verdict_s == "not_checkable:unparsed"] |= _flags.SPTYPE_UNPARSED

    return TypeCheck(
        sptypes=parsed,
        verdict=verdict_s,
        lumclass=tt["lumclass"][inverse].astype(str),
        stage=tt["stage"][inverse].astype(str),
        suggested=suggested.astype(str),
        parsed=tt["parsed"][inverse].astype(str),
        nsigma=nsigma,
        nsigma_teff=nsigma_t,
        nsigma_lum=nsigma_l,
        expected_logt=expected_logt,
        expected_logl=expected_logl,
        flags=fl,
        threshold=float(threshold),
        reason=reason.astype(str),
        hr_stage=hr_stage.astype(str),
    )


def _class_logg(logt, logl, feh, idx) -> np.ndarray:
    """log g (cgs) of positions (log Teff, log L) with the stage map's mass there (IAU 2015 Sun)."""
    from ..classifier import estimate_mass
    from ..models.stellar import LOGG_SUN, TEFF_SUN

    if feh is None:
        f = None
    else:
        fa = np.asarray(getattr(feh, "value", feh), dtype=float)
        f = float(fa) if fa.ndim == 0 else fa[idx]
    m, _, _ = estimate_mass(logt, logl, feh=f, branches=False)
    with np.errstate(all="ignore"):
        return LOGG_SUN + np.log10(m) + 4.0 * (logt - np.log10(TEFF_SUN)) - logl


def _on_giant_branch(logt, logl, feh, idx) -> np.ndarray:
    """True where the positions ``idx`` are giants or bright giants (stage map) no brighter than the RGB tip.

    The tip is the helium-ignition luminosity of the oldest stars (age-limit mass, HPT2000 eq 49)
    at the nearest point of the classifier's [Fe/H] grid (0.25-dex steps; its ends are the fits' Z
    limits), the same grids the classification uses: luminosity class III covers normal giants along the
    whole first-ascent giant branch, of which the class's mean sequence (mostly clump stars) is
    only the middle.
    """
    from ..classifier._branch import branch_grids
    from ..classifier._core import _group_feh
    from ..stages import BRIGHT_GIANT, GIANT

    out = np.zeros(len(idx), dtype=bool)
    if not len(idx):
        return out
    if feh is None:
        fv = np.zeros(len(idx))
    else:
        fa = np.asarray(getattr(feh, "value", feh), dtype=float)
        fv = np.full(len(idx), float(fa)) if fa.ndim == 0 else fa[idx]
    fv = np.nan_to_num(fv)
    tip = np.empty(len(idx))
    # the classifier's metallicity points and key (nearest grid [Fe/H], rounded to 4 decimals), so
    # that the check reuses the giant-branch grids the classification built, one per grid point
    for f, rows in _group_feh(fv, len(idx))[1].items():
        g = branch_grids(round(float(f), 4))
        tip[rows] = g.logl_tip[int(np.searchsorted(g.mass, g.m_age))]
    from ..classifier import classify_hr

    res = classify_hr(logt[idx], logl[idx], feh=None if feh is None else fv, n_draws=0, branches=False)
    return np.isin(np.asarray(res.code), (GIANT, BRIGHT_GIANT)) & (logl[idx] <= tip)


def _hr_stages(logt, logl, feh, idx) -> np.ndarray:
    """Stage names of the HR positions ``idx`` on the stage map (classifier point labels)."""
    from ..classifier import classify_hr
    from ..stages import STAGES

    if feh is None:
        f = None
    else:
        fa = np.asarray(getattr(feh, "value", feh), dtype=float)
        f = float(fa) if fa.ndim == 0 else fa[idx]
    res = classify_hr(logt[idx], logl[idx], feh=f, n_draws=0, branches=False)
    return np.asarray(STAGES, dtype=object)[np.asarray(res.code, dtype=int)]


#: luminosity classes young (contracting) stars are given while above the main sequence
_YOUNG_CLASSES = ("V", "IV", "IV-V")


def _young_check(verdict, reason, tt, inverse, logt, logl, feh, hr_ok, hr_stage) -> None:
    """Young stars (in place): a class V or IV type in conflict with the class sequences, on a
    ``pre_main_sequence`` position, is what a contracting star is given -- the class sequences are
    those of old stars -- so it is ``consistent``, with the reason (common practice: T Tauri stars
    are typed K-M V-IV, e.g. "K7Ve")."""
    lc = tt["lumclass"][inverse].astype(str)
    cand = np.flatnonzero(hr_ok & (verdict.astype(str) == "lumclass_conflict") & np.isin(lc, _YOUNG_CLASSES))
    if not cand.size:
        return
    idx = cand[_hr_stages(logt, logl, feh, cand) == "pre_main_sequence"]
    verdict[idx] = "consistent"
    reason[idx] = ("young star: the HR position is pre_main_sequence, where contracting stars typed V-IV lie "
                   "(the class sequences are those of old stars)")
    hr_stage[idx] = "pre_main_sequence"


def _stage_check(verdict, reason, tt, inverse, logt, logl, et, el, feh, hr_ok) -> np.ndarray:
    """Stage check (in place on ``verdict``/``reason``); returns the HR stage ('' where not made).

    * families without an MK calibration (white dwarfs, hot subdwarfs, WR, carbon, S) and cool
      subdwarfs (VI, sd/esd/usd): expected stage -> ``consistent``, excluded stage ->
      ``stage_conflict``, any other stage -> ``not_checkable:stage_undecided`` (a cool subdwarf
      keeps its calibration verdict unless its stage is excluded);
    * ordinary MK types whose class sequence does not reach the star's Teff
      (``outside_calibration``): the stage the class implies is compared with the HR stage;
      two or more steps apart on subdwarf < main sequence < subgiant < giant < bright giant <
      supergiant, or a white-dwarf / hot-subdwarf position, is a ``stage_conflict``; the same
      stage makes the type ``consistent``; one step apart stays not checkable.
    """
    n = len(verdict)
    hr_stage = np.full(n, "", dtype=object)
    family = tt["family"][inverse]
    v = verdict.astype(str)
    fam_need = hr_ok & (family != "") & ~np.char.endswith(v, "conflict") & (v != "not_checkable:unparsed") & (
        v != "not_checkable:no_type")
    mk_need = hr_ok & (family == "") & (v == "not_checkable:outside_calibration")
    need = np.flatnonzero(fam_need | mk_need)
    if not need.size:
        return hr_stage
    hr_stage[need] = _hr_stages(logt, logl, feh, need)
    lumclass = tt["lumclass"][inverse]
    # decisions per distinct (family or class, HR stage) pair: a handful of combinations
    st_key = hr_stage[need].astype(str)
    # Population I WR stars have log L >~ 4.9 (Crowther 2007, ARA&A 45, 177; from memory): a WR type
    # on a faint main-sequence position is excluded, a bright one (WNh) is not
    faint_wr = (family[need] == "wolf_rayet") & (st_key == "main_sequence") & (logl[need] < _WR_MIN_LOGL)
    st_key = np.where(faint_wr, "main_sequence (log L < 4.5)", st_key)
    combo = np.char.add(np.char.add(family[need].astype(str), "|"),
                        np.char.add(np.char.add(lumclass[need].astype(str), "|"), st_key))
    uniq, inv = np.unique(combo, return_inverse=True)
    dec_v = np.empty(len(uniq), dtype=object)
    dec_r = np.empty(len(uniq), dtype=object)
    for j, key in enumerate(uniq):  # loop over distinct combinations only
        fam, lc, st = key.split("|")
        dec_v[j], dec_r[j] = _stage_decision(fam, lc, st)
    new_v, new_r = dec_v[inv.ravel()], dec_r[inv.ravel()]
    old_v = verdict[need]
    keep_cal = (family[need] == "cool_subdwarf") & (new_v != "stage_conflict") & ~np.char.startswith(
        old_v.astype(str), "not_checkable")
    verdict[need] = np.where(keep_cal, old_v, new_v)
    reason[need] = np.where(keep_cal, np.char.add(np.char.add(reason[need].astype(str), "; "),
                                                  new_r.astype(str)), new_r)
    return hr_stage


def _stage_decision(family: str, lumclass: str, stage: str) -> tuple[str, str]:
    """Verdict and reason of the stage check for one (family, class, HR stage) combination."""
    from .lumclass import expected_stages

    if family:
        expected, excluded = _STAGE_RULES[family]
        what = f"a {_STAGE_FAMILY_TEXT[family]} is expected in the {'/'.join(sorted(expected))} region"
        if stage in expected:
            return "consistent", f"stage check: {what}; the HR position is {stage}"
        if stage in excluded:
            return "stage_conflict", f"stage conflict: {what}; the HR position is {stage}"
        return "not_checkable:stage_undecided", f"stage check undecided: {what}; the HR position is {stage}"
    exp = expected_stages(lumclass)
    what = f"class {lumclass} implies {'/'.join(exp)}"
    if stage in exp:
        return "consistent", f"stage check (no class sequence at this Teff): {what}; the HR position is {stage}"
    steps = [abs(_STAGE_STEP[e] - _STAGE_STEP[stage]) for e in exp if e in _STAGE_STEP and stage in _STAGE_STEP]
    if stage in ("white_dwarf", "hot_subdwarf") or (steps and min(steps) >= 2):
        return "stage_conflict", f"stage conflict (no class sequence at this Teff): {what}; the HR position is {stage}"
    return "not_checkable:outside_calibration", (f"no class sequence at this Teff; stage check undecided: {what}; "
                                                 f"the HR position is {stage}")


def class_separation(logt, class_a: str, class_b: str, numeric=None) -> np.ndarray:
    """Distance between two class sequences at log Teff ``logt``, in units of their summed scatter.

    ``|logL_a(logt) - logL_b(logt)| / (s_a + s_b)``. Where this is below the check threshold the
    HR position cannot tell the two classes apart (e.g. V and III for B-F stars, where it is
    ~1-2): a swap between them goes unnoticed, and "consistent" means only "not excluded".

    Parameters
    ----------
    logt : array-like
        log10 Teff.
    class_a, class_b : str
        Two of ``'Ia', 'Iab', 'Ib', 'II', 'III', 'IV', 'V'``.
    numeric : array-like, optional
        Type index used to pick the scatter group (default: from the V-sequence type at ``logt``).
    """
    cal = calibration()
    logt = np.asarray(logt, dtype=float)
    if numeric is None:
        seq = cal._seq["V"]
        order = np.argsort(seq.logt)
        numeric = np.interp(logt, seq.logt[order], seq.numeric[order])
    d = np.abs(cal.locus_logl(logt, class_a) - cal.locus_logl(logt, class_b))
    return d / (sigma_logl(class_a, numeric) + sigma_logl(class_b, numeric))


def all_sptype(arr: np.ndarray) -> bool:
    """True when every element of an object array is an :class:`SpType`."""
    return bool(np.all(_is_sptype(arr.ravel()).astype(bool))) if arr.size else True


_is_sptype = np.frompyfunc(lambda v: isinstance(v, SpType), 1, 1)
_raw_key = np.frompyfunc(lambda p: p.raw if p.ok or p.raw else "\x00" + p.reason, 1, 1)


def _keys(parsed: np.ndarray) -> np.ndarray:
    if not parsed.size:
        return np.array([], dtype=str)
    return _raw_key(parsed).astype(str)


def _nanargmin(a: np.ndarray) -> np.ndarray:
    """Row-wise argmin ignoring NaN; -1 for all-NaN rows."""
    if a.shape[0] == 0:
        return np.zeros(0, dtype=int)
    filled = np.where(np.isfinite(a), a, np.inf)
    k = np.argmin(filled, axis=1)
    k[~np.isfinite(filled[np.arange(len(k)), k])] = -1
    return k


def _take(a: np.ndarray, k: np.ndarray) -> np.ndarray:
    out = a[np.arange(a.shape[0]), np.maximum(k, 0)] if a.shape[0] else np.zeros(0)
    return np.where(k >= 0, out, np.nan)


def summarise_checks(chk: TypeCheck, *, by: str = "class"):
    """Counts of verdicts per luminosity class, for reports.

    Parameters
    ----------
    chk : TypeCheck
    by : {'class', 'main'}
        ``'class'`` groups by the normalised class as read (``'IIIb'``, ``'IV-V'``); ``'main'``
        folds Keenan sub-classes into their main class (``'IIIb'`` -> ``'III'``).

    Returns
    -------
    astropy.table.Table
        Columns ``lumclass`` (``'(none)'`` for types without a class), ``n``, ``consistent``,
        ``conflicts``, ``lumclass_conflicts``, ``tclass_conflicts``, ``not_checkable`` and
        ``conflict_rate`` = conflicts / checked, where checked counts the consistent stars, the
        conflicts and the types without a class whose Teff was checked and passed
        (``not_checkable:no_lumclass``); NaN when nothing was checkable.
        A last row ``'(all)'`` sums every class.
    """
    from astropy.table import Table

    if by not in ("class", "main"):
        raise HrstageInputError(f"by: expected 'class' or 'main', got {by!r}")
    lc = chk.lumclass.astype(str)
    if by == "main":
        fold = np.vectorize(_fold_main, otypes=[str])
        lc = fold(lc) if lc.size else lc
    lc = np.where(lc == "", "(none)", lc)
    v = chk.verdict.astype(str)
    conflict = np.char.endswith(v, "conflict")
    cons = v == "consistent"
    lconf = np.char.find(v, "lumclass_conflict") >= 0
    tconf = np.char.startswith(v, "tclass")
    nc = np.char.startswith(v, "not_checkable")
    t_only = v == "not_checkable:no_lumclass"  # Teff was checked and passed
    order = _class_order(np.unique(lc))
    rows = []
    for name in order + ["(all)"]:
        m = np.ones(len(lc), bool) if name == "(all)" else lc == name
        nn = int(m.sum())
        ncons = int((cons & m).sum())
        ncf = int((conflict & m).sum())
        checked = ncons + ncf + int((t_only & m).sum())
        rows.append((name, nn, ncons, ncf, int((lconf & m).sum()), int((tconf & m).sum()), int((nc & m).sum()),
                     ncf / checked if checked else np.nan))
    names = ("lumclass", "n", "consistent", "conflicts", "lumclass_conflicts", "tclass_conflicts", "not_checkable",
             "conflict_rate")
    t = Table(rows=rows, names=names, dtype=(str, int, int, int, int, int, int, float))
    t.meta["threshold_sigma"] = chk.threshold
    t.meta["note"] = ("Indicative: conflicts may come from the type, the parallax, extinction, binarity or "
                      "the calibration; they do not replace a spectroscopic analysis.")
    return t


def _fold_v(m) -> str:
    return "V" if m.group(0).startswith("V") else ""


def _fold_main(lc: str) -> str:
    """Fold Keenan sub-classes of II-V into the main class: 'IIIb' -> 'III', 'III-IIIb' -> 'III'."""
    import re

    parts = [re.sub(r"(?<=II|IV|.V)(ab|a|b)$|^V(ab|a|b)$", _fold_v, p) for p in lc.split("-")] if lc else [lc]
    parts = list(dict.fromkeys(parts))
    return "-".join(parts)


_ORDER = ["0", "Ia", "Ia-Iab", "Iab", "Iab-Ib", "Ib", "I", "Ib-II", "II", "II-III", "III", "III-IV", "IV", "IV-V",
          "V", "VI"]


def _class_order(names) -> list[str]:
    names = [str(x) for x in names]
    known = [x for x in _ORDER if x in names]
    rest = sorted(x for x in names if x not in _ORDER and x != "(none)")
    return known + rest + (["(none)"] if "(none)" in names else [])
