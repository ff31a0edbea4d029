"""Layer 5: catalogue columns -> (Teff, L) with correlated errors and a record of how.

Paths
-----
:func:`from_teff_lum`     Teff and L given (linear, log, or astropy units)
:func:`from_teff_radius`  Teff and R (Stefan-Boltzmann)
:func:`from_teff_logg`    Teff and log g, L through the model mass (iterated to consistency)
:func:`from_gaia`         G, BP-RP, parallax (Casagrande+2021 Teff, Andrae+2018 BC_G)
:func:`from_johnson`      V, B-V (V-Ks), parallax (Casagrande+2010 / Flower Teff, Flower-Torres BC_V)

Every path returns an :class:`HRPosition`: one entry per input row, in order; rows that cannot be
placed hold NaN and a flag bit (:mod:`hrstage.flags`) saying why. The positions are indicative:
photometric Teff and L carry the systematic errors of the calibrations (and of the parallax) and
do not replace a spectroscopic analysis. See ``docs/derive.md``.
"""

from ._position import HRPosition
from .direct import from_teff_logg, from_teff_lum, from_teff_radius
from .photometric import from_gaia, from_johnson

__all__ = ["HRPosition", "from_teff_lum", "from_teff_radius", "from_teff_logg", "from_gaia", "from_johnson"]
