"""Casagrande et al. (2010) IRFM colour-Teff-[Fe/H] relations for dwarfs and subgiants.

References
----------
Casagrande, L., Ramírez, I., Meléndez, J., Bessell, M., & Asplund, M. 2010, A&A 512, A54,
"An absolutely calibrated Teff scale from the infrared flux method. Dwarfs and subgiants",
Table 4 (coefficients, colour and [Fe/H] ranges, N, sigma). Transcription checked against the
journal's HTML table (formulae.md §5.2).

    theta = 5040 K / Teff = a0 + a1 X + a2 X**2 + a3 X [Fe/H] + a4 [Fe/H] + a5 [Fe/H]**2

X is the dereddened colour in the Johnson (B, V), Cousins (R_C, I_C), 2MASS (J, H, K_s) or Tycho
(B_T, V_T) systems. **Dwarfs and subgiants only**: do not use for giants. Strömgren b-y is left out
on purpose (it needs the paper's extra correction polynomial, which we have not verified).

Validity: each colour has its own colour and [Fe/H] range (:data:`RELATIONS`); outside them the
functions return NaN (never extrapolate). The relation's scatter (K) is ``RELATIONS[name].sigma``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class _Colour:
    coeffs: tuple[float, float, float, float, float, float]
    colour_range: tuple[float, float]
    feh_range: tuple[float, float]
    n_stars: int
    sigma: float  # K


#: Table 4 of Casagrande et al. (2010), keyed by colour name.
RELATIONS = {
    "B-V": _Colour((0.5665, 0.4809, -0.0060, -0.0613, -0.0042, -0.0055), (0.18, 1.29), (-5.0, 0.4), 400, 73.0),
    "V-Rc": _Colour((0.4386, 1.4614, -0.7014, -0.0807, 0.0142, -0.0015), (0.24, 0.80), (-5.0, 0.3), 201, 62.0),
    "Rc-Ic": _Colour((0.3296, 1.9716, -1.0225, -0.0298, 0.0329, 0.0035), (0.23, 0.68), (-5.0, 0.3), 211, 82.0),
    "V-Ic": _Colour((0.4033, 0.8171, -0.1987, -0.0409, 0.0319, 0.0012), (0.46, 1.47), (-5.0, 0.3), 208, 59.0),
    "V-J": _Colour((0.4669, 0.3849, -0.0350, -0.0140, 0.0225, 0.0011), (0.61, 2.44), (-5.0, 0.4), 401, 42.0),
    "V-H": _Colour((0.5251, 0.2553, -0.0119, -0.0187, 0.0410, 0.0025), (0.67, 3.01), (-5.0, 0.4), 401, 33.0),
    "V-Ks": _Colour((0.5057, 0.2600, -0.0146, -0.0131, 0.0288, 0.0016), (0.78, 3.15), (-5.0, 0.4), 401, 25.0),
    "J-Ks": _Colour((0.6393, 0.6104, 0.0920, -0.0330, 0.0291, 0.0020), (0.07, 0.80), (-5.0, 0.4), 412, 132.0),
    "Bt-Vt": _Colour((0.5839, 0.4000, -0.0067, -0.0282, -0.0346, -0.0087), (0.19, 1.49), (-2.7, 0.4), 251, 79.0),
    "Vt-J": _Colour((0.4525, 0.3797, -0.0357, -0.0082, 0.0123, -0.0009), (0.77, 2.56), (-2.7, 0.4), 272, 43.0),
    "Vt-H": _Colour((0.5286, 0.2354, -0.0073, -0.0182, 0.0401, 0.0021), (0.77, 3.16), (-2.7, 0.4), 263, 26.0),
    "Vt-Ks": _Colour((0.4892, 0.2634, -0.0165, -0.0121, 0.0249, -0.0001), (0.99, 3.29), (-2.4, 0.4), 258, 18.0),
}

CITATION = "Casagrande et al. 2010, A&A 512, A54, Table 4"


def teff(colour, feh=0.0, *, which="B-V"):
    """Teff (K) from a dereddened colour and [Fe/H].

    Parameters
    ----------
    colour : array_like
        Dereddened colour (mag) of the kind named by ``which``.
    feh : array_like, default 0.0
        [Fe/H] (dex); broadcast against ``colour``.
    which : str, default "B-V"
        One of the keys of :data:`RELATIONS`.

    Returns
    -------
    numpy.ndarray
        Teff in K; NaN outside the colour or [Fe/H] range of the relation.
    """
    try:
        rel = RELATIONS[which]
    except KeyError:
        raise ValueError(f"unknown Casagrande 2010 colour {which!r}; expected one of {sorted(RELATIONS)}") from None
    x, f = np.broadcast_arrays(np.asarray(colour, dtype=float), np.asarray(feh, dtype=float))
    a0, a1, a2, a3, a4, a5 = rel.coeffs
    theta = a0 + a1 * x + a2 * x * x + a3 * x * f + a4 * f + a5 * f * f
    ok = (x >= rel.colour_range[0]) & (x <= rel.colour_range[1]) & (f >= rel.feh_range[0]) & (f <= rel.feh_range[1])
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(ok, 5040.0 / theta, np.nan)


def in_range(colour, feh=0.0, *, which="B-V"):
    """Boolean mask: colour and [Fe/H] inside the validity range of relation ``which``."""
    rel = RELATIONS[which]
    x, f = np.broadcast_arrays(np.asarray(colour, dtype=float), np.asarray(feh, dtype=float))
    return (x >= rel.colour_range[0]) & (x <= rel.colour_range[1]) & (f >= rel.feh_range[0]) & (f <= rel.feh_range[1])
