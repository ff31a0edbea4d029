"""Mucciarelli, Bellazzini & Massari (2021) Gaia EDR3 (BP-RP)_0 - Teff relations.

References
----------
Mucciarelli, A., Bellazzini, M., & Massari, D. 2021, A&A 653, A90, "Exploiting the Gaia EDR3
photometry to derive stellar temperatures", Table 1 (BP-RP rows). Calibrated on ~600 dwarfs and
giants with IRFM temperatures; 1-sigma dispersion 60-80 K for the pure Gaia colours (abstract).

    theta = 5040 K / Teff = b0 + b1 C + b2 C**2 + b3 [Fe/H] + b4 [Fe/H]**2 + b5 [Fe/H] C

Attribution (our choice, stated): the same six numbers per class appear in three public
transcriptions; two label them the EDR3 relations of Mucciarelli, Bellazzini & Massari (2021,
Table 1), one labels them the DR2 note of Mucciarelli & Bellazzini (2020, RNAAS 4, 52). Their
scatters (61 K dwarfs, 83 K giants) match the EDR3 paper's quoted 60-80 K, so we attribute them
to the EDR3 paper and recommend them for EDR3/DR3 photometry only. Not verified against the PDF
(formulae.md §5.3 [?]); hrstage therefore uses Casagrande et al. (2021) by default and offers this
relation as an alternative.

Validity (NaN outside): dwarfs 0.39 <= C <= 1.50, giants 0.33 <= C <= 1.81. The [Fe/H] range is
not transcribed; we accept -4 <= [Fe/H] <= 0.5 (our limit, from memory of the calibrating sample).
"""

from __future__ import annotations

import numpy as np

COEFFS = {
    "dwarf": (0.4929, 0.5092, -0.0353, 0.0192, -0.0020, -0.0395),
    "giant": (0.5323, 0.4775, -0.0344, -0.0110, -0.0020, -0.0009),
}
COLOUR_RANGE = {"dwarf": (0.39, 1.50), "giant": (0.33, 1.81)}
SIGMA = {"dwarf": 61.0, "giant": 83.0}
FEH_RANGE = (-4.0, 0.5)
CITATION = "Mucciarelli, Bellazzini & Massari 2021, A&A 653, A90, Table 1"


def in_range(bp_rp0, feh=0.0, *, kind="dwarf"):
    """Boolean mask of validity for class ``kind`` ("dwarf" or "giant")."""
    x, f = np.broadcast_arrays(np.asarray(bp_rp0, dtype=float), np.asarray(feh, dtype=float))
    lo, hi = COLOUR_RANGE[kind]
    return (x >= lo) & (x <= hi) & (f >= FEH_RANGE[0]) & (f <= FEH_RANGE[1])


def teff(bp_rp0, feh=0.0, *, kind="dwarf"):
    """Teff (K) from dereddened Gaia EDR3 BP-RP and [Fe/H]; NaN outside the validity range."""
    if kind not in COEFFS:
        raise ValueError(f"kind must be 'dwarf' or 'giant', got {kind!r}")
    x, f = np.broadcast_arrays(np.asarray(bp_rp0, dtype=float), np.asarray(feh, dtype=float))
    b0, b1, b2, b3, b4, b5 = COEFFS[kind]
    theta = b0 + b1 * x + b2 * x * x + b3 * f + b4 * f * f + b5 * f * x
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(in_range(x, f, kind=kind), 5040.0 / theta, np.nan)
