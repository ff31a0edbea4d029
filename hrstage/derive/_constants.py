"""Solar reference values used by :mod:`hrstage.derive`.

TEFF_SUN (5772 K, IAU 2015 B3), MBOL_SUN (4.74, IAU 2015 B2) and LOGG_SUN (nominal GM_sun / R_sun^2,
cgs) come from :mod:`hrstage.models.stellar`, which takes them from astropy's iau2015 constants.
"""

from __future__ import annotations

import math

from ..models.stellar import LOGG_SUN, MBOL_SUN, TEFF_SUN

#: The parallax (mas) of an object at 1 au: 1 radian expressed in mas.
PARALLAX_1AU_MAS = 180.0 / math.pi * 3600.0e3
LN10 = math.log(10.0)

__all__ = ["TEFF_SUN", "MBOL_SUN", "LOGG_SUN", "PARALLAX_1AU_MAS", "LN10"]
