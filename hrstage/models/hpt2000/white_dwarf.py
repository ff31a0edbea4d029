"""White-dwarf mass-radius relation of Hurley, Pols & Tout (2000).

Citation: Hurley J. R., Pols O. R., Tout C. A., 2000, MNRAS 315, 543, section 6.2.1, eq (91)
(equation number as quoted in code comments of public implementations):

    R_WD = max(R_NS, 0.0115 sqrt((M_Ch / M)^(2/3) - (M / M_Ch)^(2/3)))   [Rsun]

with the Chandrasekhar mass M_Ch = 1.44 Msun and the neutron-star radius R_NS = 1.4e-5 Rsun as a
floor (10 km). A zero-temperature relation: real white dwarfs, especially hot or low-mass ones,
are somewhat larger.

Validity: 0.1 <= M <= 1.44 Msun (:data:`WD_MASS_RANGE`); NaN outside (masked). No metallicity
dependence. Units: Msun, Rsun.
"""

from __future__ import annotations

import numpy as np

from .._common import as_float, mass_mask, masked

#: Chandrasekhar mass used by HPT2000 (Msun).
M_CHANDRASEKHAR = 1.44
#: Neutron-star radius used as a floor (Rsun).
R_NEUTRON_STAR = 1.4e-5
#: White-dwarf masses (Msun) for which :func:`wd_radius` is evaluated.
WD_MASS_RANGE = (0.1, M_CHANDRASEKHAR)


def wd_radius(m) -> np.ndarray:
    """Radius (Rsun) of a white dwarf of mass ``m`` (Msun), HPT2000 eq (91).

    NaN outside 0.1-1.44 Msun.
    """
    m, ok = mass_mask(as_float(m, "Msun"), *WD_MASS_RANGE)
    q = (M_CHANDRASEKHAR / m) ** (2.0 / 3.0) - (m / M_CHANDRASEKHAR) ** (2.0 / 3.0)
    r = 0.0115 * np.sqrt(np.maximum(q, 0.0))
    return masked(np.maximum(R_NEUTRON_STAR, r), ok)
