"""Flower (1996) Teff-(B-V) polynomials, coefficients as re-printed by Torres (2010) Table 2.

References
----------
Flower, P. J. 1996, ApJ 469, 355. Torres, G. 2010, AJ 140, 1158, Table 2 (corrected coefficients).
Transcription cross-checked in three public files (formulae.md §4.1).

    log10 Teff = sum_i c_i (B-V)**i

Two branches: ``"dwarf_giant"`` (main sequence, subgiants and giants) and ``"supergiant"``.
Valid colour range (enforced, NaN outside): -0.35 <= (B-V)_0 <= 1.90. The paper's exact range was
not verified (formulae.md: roughly -0.3 < B-V < 1.9, from memory); we widen it by 0.05 mag at the
blue end so that the hottest dwarf colours (-0.33) are accepted. Scatter: Torres does not give a
single number here; hrstage adopts 100 K (our choice, common practice for a Teff from B-V alone).
"""

from __future__ import annotations

import numpy as np

COEFFS = {
    "dwarf_giant": (3.979145106714099, -0.654992268598245, 1.740690042385095, -4.608815154057166,
                    6.792599779944473, -5.396909891322525, 2.192970376522490, -0.359495739295671),
    "supergiant": (4.012559732366214, -1.055043117465989, 2.133394538571825, -2.459769794654992,
                   1.349423943497744, -0.283942579112032),
}
COLOUR_RANGE = (-0.35, 1.90)
SIGMA = 100.0  # K, adopted (see module docstring)
CITATION = "Flower 1996, ApJ 469, 355 (Torres 2010, AJ 140, 1158, Table 2)"


def in_range(b_v0):
    """Boolean mask: (B-V)_0 inside :data:`COLOUR_RANGE`."""
    c = np.asarray(b_v0, dtype=float)
    return (c >= COLOUR_RANGE[0]) & (c <= COLOUR_RANGE[1])


def teff(b_v0, *, branch="dwarf_giant"):
    """Teff (K) from dereddened B-V; NaN outside the colour range."""
    if branch not in COEFFS:
        raise ValueError(f"branch must be one of {sorted(COEFFS)}, got {branch!r}")
    c = np.asarray(b_v0, dtype=float)
    coeffs = COEFFS[branch]
    out = np.full_like(c, coeffs[-1])
    for k in coeffs[-2::-1]:
        out = out * c + k
    return np.where(in_range(c), 10.0 ** out, np.nan)
