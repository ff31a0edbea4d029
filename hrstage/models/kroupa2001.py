"""Initial mass function above 0.5 Msun (Kroupa 2001).

Citation: Kroupa P., 2001, "On the variation of the initial mass function", MNRAS 322, 231,
eq (2): a multi-part power law ``xi(M) ∝ M^-alpha`` with alpha = 2.3 for M >= 0.5 Msun
(alpha = 1.3 for 0.08-0.5 Msun, not needed here: every star that has left the main sequence within
the age of the Universe is above 0.5 Msun).

hrstage uses it as the prior on the initial mass of a giant when it weighs the branch hypotheses
(:mod:`hrstage.classifier._branch`). Validity: 0.5-150 Msun (NaN outside). The normalisation is
arbitrary (``xi(1 Msun) = 1``): only ratios are used.
"""

from __future__ import annotations

import numpy as np

from ._common import as_float, masked

#: power-law index above 0.5 Msun (Kroupa 2001 eq 2)
ALPHA_HIGH = 2.3
MASS_RANGE = (0.5, 150.0)


def imf(m) -> np.ndarray:
    """Relative number of stars per unit initial mass, ``M^-2.3`` (1 at 1 Msun); NaN outside 0.5-150 Msun."""
    m = as_float(m, "Msun")
    ok = (m >= MASS_RANGE[0]) & (m <= MASS_RANGE[1])
    return masked(np.where(ok, m, 1.0) ** -ALPHA_HIGH, ok)


__all__ = ["imf", "ALPHA_HIGH", "MASS_RANGE"]
