"""Gaia (E)DR3 G - V as a cubic in BP - RP (Riello et al. 2021).

References
----------
Riello, M., De Angeli, F., Evans, D. W., et al. 2021, A&A 649, A3, "Gaia Early Data Release 3:
Photometric content and validation", Appendix C; the same coefficients are in the Gaia (E)DR3
documentation, §5.5.1 "Relationships with other photometric systems" (Johnson-Cousins, Stetson
2000 standards). Coefficients and sigma as found identical in several public transcriptions
(not read from the PDF).

    G - V = -0.02704 + 0.01424 C - 0.2156 C**2 + 0.01426 C**3,   C = BP - RP
    sigma = 0.03017 mag, valid for -0.5 < C < 5.0

hrstage uses it only to turn a V-band bolometric correction into a G-band one outside the range of
the Andrae et al. (2018) BC_G fit (see :mod:`hrstage.derive`). It is an empirical mean relation for
stars with little reddening; for white dwarfs and other peculiar spectra it is an approximation.
Outside the colour range the function returns NaN.
"""

from __future__ import annotations

import numpy as np

COEFFS = (-0.02704, 0.01424, -0.2156, 0.01426)
SIGMA = 0.03017
BP_RP_RANGE = (-0.5, 5.0)


def g_minus_v(bp_rp):
    """G - V (mag) from BP - RP (mag); NaN outside -0.5 < BP - RP < 5.0."""
    c = np.asarray(bp_rp, dtype=float)
    ok = (c > BP_RP_RANGE[0]) & (c < BP_RP_RANGE[1])
    c0, c1, c2, c3 = COEFFS
    out = c0 + c * (c1 + c * (c2 + c * c3))
    return np.where(ok, out, np.nan)
