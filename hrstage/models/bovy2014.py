"""Red-clump selection in (Teff, log g, [Fe/H]) of Bovy et al. (2014).

Citation: Bovy J., Nidever D. L., Rix H.-W., et al., 2014, "The APOGEE red-clump catalog: precise
distances, velocities, and high-resolution elemental abundances over a large area of the Milky
Way's disk", ApJ 790, 127, section 2 (eqs 2-3):

- metallicity-dependent reference temperature ``Teff_ref = -382.5 K [Fe/H] + 4607 K``;
- clump stars lie at ``1.8 <= log g <= 0.0018 dex/K (Teff - Teff_ref) + 2.5``.

Their full selection adds cuts in (J - Ks)_0 and metallicity Z, which need 2MASS photometry and are
not applied here; with those cuts they quote about 93 % purity for APOGEE spectroscopic log g.
The coefficients are typed in from memory of the paper: a search of the stored public pages in
round 3 reached the paper's abstract (arXiv:1405.1032) but not its section 2, so they are still
unverified. Validity: the APOGEE giants they were calibrated on, about -0.8 <= [Fe/H] <= +0.4 and
4000-5300 K; outside that the box is returned but its meaning is an extrapolation.
"""

from __future__ import annotations

import numpy as np

from ._common import as_float

#: Teff_ref = TREF_SLOPE [Fe/H] + TREF_ZERO (K), Bovy et al. 2014
TREF_SLOPE = -382.5
TREF_ZERO = 4607.0
#: log g bounds: LOGG_MIN <= log g <= LOGG_SLOPE (Teff - Teff_ref) + LOGG_ZERO
LOGG_MIN = 1.8
LOGG_SLOPE = 0.0018
LOGG_ZERO = 2.5
#: metallicity range of the calibration sample (approximate)
FEH_RANGE = (-0.8, 0.4)


def teff_ref(feh) -> np.ndarray:
    """Reference temperature (K) of the clump at metallicity ``feh`` (dex)."""
    return TREF_SLOPE * as_float(feh) + TREF_ZERO


def logg_upper(teff, feh) -> np.ndarray:
    """Upper log g bound (cgs dex) of the clump box at (Teff in K, [Fe/H])."""
    return LOGG_SLOPE * (as_float(teff, "K") - teff_ref(feh)) + LOGG_ZERO


def in_clump_box(teff, logg, feh) -> np.ndarray:
    """True where (Teff, log g, [Fe/H]) lies inside the Bovy et al. (2014) clump box (False for NaN)."""
    g = as_float(logg)
    with np.errstate(invalid="ignore"):
        return (g >= LOGG_MIN) & (g <= logg_upper(teff, feh))


__all__ = ["teff_ref", "logg_upper", "in_clump_box", "FEH_RANGE"]
