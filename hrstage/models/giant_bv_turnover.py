"""Where B-V stops measuring the temperature of red giants: the M-giant turnover.

On the giant branch B-V grows with falling Teff only down to the early M giants. Its maximum,
(B-V) ~ 1.6, is reached around M2-M3 III; later M giants turn *bluer* again, because the TiO
bands that deepen with falling Teff absorb more of the V band than of the B band (Johnson 1966,
ARA&A 4, 193, intrinsic colours of giants; Fluks et al. 1994, A&AS 105, 311, intrinsic colours of
M0-M10 giants -- both from memory, numbers not re-checked against the papers). An M6 III star has
roughly the B-V of a K2-K4 giant.

So a giant's B-V has two readings wherever it is redder than the bluest colour the turned-back
late-M giants reach:

* the K/early-M giant reading of the ordinary colour-Teff relation (Flower 1996), and
* a late-M giant reading, anywhere between :data:`TEFF_COOL_END` and :data:`TEFF_PEAK`, about
  which the colour says nothing more (the turned-back branch is flat and its scatter large:
  most late-M giants are semi-regular or Mira variables).

Adopted numbers
---------------
:data:`TEFF_PEAK` = 3650 K
    Teff of M3 III, where B-V peaks (Straizys & Kuriliene 1981, Ap&SS 80, 353, Table III, as in
    the project's class-III calibration; Allen's Astrophysical Quantities gives 3630 K).
:data:`TEFF_COOL_END` = 3000 K
    about M8 III, the coolest ordinary M giants (from memory; Mira variables at minimum are cooler
    still).
:data:`BV_TURNOVER_MIN` = 1.15
    bluest intrinsic B-V of the turned-back branch for ordinary late-M giants, about M6-M7 III
    (from memory, Fluks et al. 1994); redder giants have the second reading.
:data:`BV_SATURATED` = 1.40
    from here (about K4-K5 III) to the peak every giant colour is shared by K5-M6 giants spanning
    ~4000 to ~3250 K: the colour is *saturated* and its Teff gets the wide error of
    :func:`saturated_logt_sigma` (our choice: half the distance, in log Teff, between the colour's
    Teff and the middle of the late-M reading).

These are giant-branch numbers: dwarfs have their own limit (B-V no longer tracks Teff for M
dwarfs beyond (B-V)_0 = 1.40, :mod:`hrstage.derive.photometric`), and red supergiants are not
covered. Temperatures from a turned-over colour are indicative; V-Ks or a spectroscopic Teff
decides.
"""

from __future__ import annotations

import numpy as np

from . import flower_teff

TEFF_PEAK = 3650.0
TEFF_COOL_END = 3000.0
BV_TURNOVER_MIN = 1.15
BV_SATURATED = 1.40
CITATION = ("Johnson 1966, ARA&A 4, 193; Fluks et al. 1994, A&AS 105, 311 (M-giant B-V turnover, from memory); "
            "Straizys & Kuriliene 1981, Ap&SS 80, 353 (Teff of M3 III)")

#: log10 Teff range of the late-M giant reading: (cool end, peak)
LOGT_RANGE = (float(np.log10(TEFF_COOL_END)), float(np.log10(TEFF_PEAK)))
#: log10 of Flower's giant Teff at :data:`BV_SATURATED` (Flower's branch falls monotonically with B-V):
#: a flagged giant at or below it has the widened error of :func:`saturated_logt_sigma`
LOGT_SATURATED = float(np.log10(flower_teff.teff(BV_SATURATED)))
#: log10 of Flower's giant Teff at :data:`BV_TURNOVER_MIN`: a flagged position hotter than this is not a
#: red giant's colour (the same flag marks the flat Gaia colours of O-B stars)
LOGT_TURNOVER = float(np.log10(flower_teff.teff(BV_TURNOVER_MIN)))


def has_cool_reading(b_v0) -> np.ndarray:
    """True where a giant's (B-V)_0 is also that of a late-M giant (>= :data:`BV_TURNOVER_MIN`)."""
    c = np.asarray(b_v0, dtype=float)
    return c >= BV_TURNOVER_MIN


def is_saturated(b_v0) -> np.ndarray:
    """True where a giant's (B-V)_0 is in the saturated range (>= :data:`BV_SATURATED`)."""
    c = np.asarray(b_v0, dtype=float)
    return c >= BV_SATURATED


def saturated_logt_sigma(logt_colour) -> np.ndarray:
    """Extra 1-sigma error (dex) of a saturated colour's log Teff: half the distance from the colour's
    log Teff to the middle of the late-M reading (0 where the colour's Teff is already that cool).

    The error is one-sided in nature: a saturated colour allows cooler stars, not hotter ones. The
    Gaussian error model of the HR position makes it symmetric; the MK check
    (:mod:`hrstage.sptype.check`) takes it off again on the hot side.
    """
    mid = 0.5 * (LOGT_RANGE[0] + LOGT_RANGE[1])
    lt = np.asarray(logt_colour, dtype=float)
    return np.maximum(0.5 * (lt - mid), 0.0)


def widened_logt_sigma(logt_colour, flagged) -> np.ndarray:
    """The part of a flagged giant's log Teff error added by :func:`saturated_logt_sigma` (0 for
    rows not flagged or hotter than :data:`LOGT_SATURATED`)."""
    lt = np.asarray(logt_colour, dtype=float)
    with np.errstate(invalid="ignore"):
        on = np.asarray(flagged, dtype=bool) & (lt <= LOGT_SATURATED + 1e-9)
    return np.where(on, saturated_logt_sigma(lt), 0.0)
