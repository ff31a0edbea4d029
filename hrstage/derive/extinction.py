"""Interstellar extinction in the photometric bands, from a published curve via dust_extinction.

A_band = A_V x k_band with k_band = A(lambda_band) / A(lambda_V) from the chosen curve evaluated at
the band's wavelength, so that k_V = 1 exactly and the user's A_V is the V-band extinction.
Default curve: Gordon et al. 2023 (ApJ 950, 86; ``G23`` in dust_extinction), R_V = 3.1 (a
parameter). Alternative: ``F99`` (Fitzpatrick 1999, PASP 111, 63).

Band wavelengths (micron)
-------------------------
* Gaia (E)DR3 G, BP, RP: pivot wavelengths of the SVO Filter Profile Service (Rodrigo & Solano
  2020) for the GAIA3 passbands (Riello et al. 2021): 0.621759, 0.510971, 0.776902 (as found in
  several public files).
* Johnson B, V: effective wavelengths of Bessell, Castelli & Plez 1998 (A&A 333, 231, Table A2),
  0.438 and 0.545 (from memory).
* 2MASS K_s: isophotal wavelength 2.159 (Cohen, Wheaton & Megeath 2003, AJ 126, 1090; from memory).

Caution: single-wavelength coefficients ignore that a broad band's extinction depends on the
star's spectrum and on A_V itself (for Gaia G the ratio A_G/A_V falls by ~10-20 % from hot to very
red stars). For A_V of a few tenths this is a few hundredths of a magnitude; for heavily reddened
stars supply A_G and E(BP-RP) directly.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from ..errors import HrstageInputError

BAND_WAVELENGTH_UM = {
    "G": 0.621759,
    "BP": 0.510971,
    "RP": 0.776902,
    "B": 0.438,
    "V": 0.545,
    "Ks": 2.159,
}
CURVES = ("G23", "F99")


@lru_cache(maxsize=32)
def _coefficients(curve: str, r_v: float):
    try:
        from dust_extinction import parameter_averages as pa
        import astropy.units as u
    except ImportError:  # pragma: no cover - exercised only without the optional dependency
        raise HrstageInputError(
            "extinction correction needs the optional package dust_extinction "
            "(install hrstage[extinction]) or pass the extinction as zero"
        ) from None
    if curve not in CURVES:
        raise HrstageInputError(f"extinction curve must be one of {CURVES}, got {curve!r}")
    model_cls = getattr(pa, curve)
    lo, hi = model_cls.Rv_range
    if not (lo <= r_v <= hi):
        raise HrstageInputError(f"r_v={r_v} outside the range {lo}-{hi} of the {curve} curve")
    model = model_cls(Rv=r_v)
    names = list(BAND_WAVELENGTH_UM)
    lam = np.array([BAND_WAVELENGTH_UM[b] for b in names]) * u.micron
    a_over_av = np.asarray(model(lam), dtype=float)
    k_v = a_over_av[names.index("V")]
    return {b: float(a / k_v) for b, a in zip(names, a_over_av)}


def coefficients(curve: str = "G23", r_v: float = 3.1) -> dict:
    """A_band / A_V for the bands of :data:`BAND_WAVELENGTH_UM` (cached per curve and R_V).

    Raises
    ------
    HrstageInputError
        Unknown curve, R_V outside the curve's range, non-scalar R_V, or dust_extinction missing.
    """
    r = np.asarray(r_v, dtype=float)
    if r.ndim != 0 or not np.isfinite(r):
        raise HrstageInputError(f"r_v must be one finite number, got {r_v!r}")
    return dict(_coefficients(str(curve), float(r)))
