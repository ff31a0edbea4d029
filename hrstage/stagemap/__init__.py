"""Stage boundaries for one metallicity (layer 2).

:func:`stage_map` returns a cached :class:`StageMap`: the ZAMS (Tout et al. 1996), the TAMS and
the 13.8 Gyr main-sequence edge, the end of the Hertzsprung gap, the giant-branch tip and AGB
(Hurley, Pols & Tout 2000), the supergiant and bright-giant edges and the white-dwarf band, turned
into stage regions in (log Teff, log L) and rasterised for fast lookups; :func:`prebuild` builds
several metallicities at once. The boundaries come from
analytic fits to single-star models: the labels they give are indicative and do not replace a
spectroscopic analysis.
"""

from ._map import (
    CACHE_SIZE,
    FEH_HELD_MAX,
    MASS_METHODS,
    RAW_BINARY,
    RAW_EXTRAPOLATED,
    RAW_HB,
    RAW_STAGE,
    Curve,
    StageMap,
    prebuild,
    stage_map,
)
from ._params import StageParams
from ._raster import Grid

__all__ = [
    "StageMap",
    "StageParams",
    "stage_map",
    "prebuild",
    "CACHE_SIZE",
    "FEH_HELD_MAX",
    "Curve",
    "Grid",
    "MASS_METHODS",
    "RAW_BINARY",
    "RAW_EXTRAPOLATED",
    "RAW_HB",
    "RAW_STAGE",
]
