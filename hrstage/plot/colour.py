"""Display colour of a blackbody: Planck spectrum -> CIE 1931 XYZ -> sRGB.

The colour a star of temperature T would have if it radiated as a blackbody and were seen on an
sRGB display, normalised to full brightness. It is a physically motivated colour scale for
colouring points "by temperature"; it is *not* a colour index of the star.

Method
------
1. Planck's law, B_lambda(T) proportional to lambda^-5 / (exp(hc / lambda k T) - 1), sampled every
   2 nm from 360 to 830 nm (the range of the CIE 1931 tables). h, c and k come from
   ``astropy.constants`` (CODATA 2018, exact SI values).
2. Integrated against the CIE 1931 2-degree colour-matching functions, approximated by the
   multi-lobe piecewise-Gaussian fit of Wyman, Sloan & Shirley (2013, Journal of Computer Graphics
   Techniques 2(2), 1-11, eq. 4). The authors show its error is below the spread between the
   observers pooled into the CIE standard.
3. XYZ -> linear sRGB with the IEC 61966-2-1:1999 matrix (D65 white). Colours outside the sRGB
   gamut (the reddest, T below about 1900 K, need a negative blue or green) are clipped to
   the gamut boundary; the brightest channel is then scaled to 1.
4. Gamma-encoded with the sRGB transfer curve of IEC 61966-2-1.

Because the sRGB white is D65 (close to a 6500 K Planckian radiator), the Sun (5772 K) comes out
a slightly warm white, a 3000 K star orange and a 10 000 K star pale blue.
"""

from __future__ import annotations

import numpy as np
from astropy import constants as const

from ..errors import HrstageInputError

__all__ = ["blackbody_colour", "cie1931_cmf", "blackbody_xyz", "xyz_to_srgb"]

#: Wavelength sampling of the colour integral [nm].
WAVELENGTH_NM = np.arange(360.0, 830.0 + 1e-9, 2.0)

# (weight, mean, sigma below the mean, sigma above the mean) in nm for each lobe.
# Wyman, Sloan & Shirley 2013, JCGT 2(2), eq. 4 (multi-lobe fit of the CIE 1931 2-degree observer).
_LOBES_X = ((1.056, 599.8, 37.9, 31.0), (0.362, 442.0, 16.0, 26.7), (-0.065, 501.1, 20.4, 26.2))
_LOBES_Y = ((0.821, 568.8, 46.9, 40.5), (0.286, 530.9, 16.3, 31.1))
_LOBES_Z = ((1.217, 437.0, 11.8, 36.0), (0.681, 459.0, 26.0, 13.8))

#: XYZ (D65) -> linear sRGB, IEC 61966-2-1:1999.
XYZ_TO_LINEAR_SRGB = np.array(
    [
        [3.2406, -1.5372, -0.4986],
        [-0.9689, 1.8758, 0.0415],
        [0.0557, -0.2040, 1.0570],
    ]
)

# hc/k in nm K (second radiation constant), from astropy constants.
_C2_NM_K = float((const.h * const.c / const.k_B).to_value("m K")) * 1e9

#: Above this many distinct temperatures the colours come from a fine log-T grid (see
#: :func:`blackbody_colour`).
_EXACT_LIMIT = 2048
_GRID_LOGT = np.linspace(np.log10(500.0), np.log10(1.0e6), 6001)


def _lobes(lam: np.ndarray, lobes) -> np.ndarray:
    out = np.zeros_like(lam, dtype=float)
    for weight, mean, s_low, s_high in lobes:
        sigma = np.where(lam < mean, s_low, s_high)
        out += weight * np.exp(-0.5 * ((lam - mean) / sigma) ** 2)
    return out


def cie1931_cmf(wavelength_nm) -> np.ndarray:
    """CIE 1931 2-degree colour-matching functions (x-bar, y-bar, z-bar) at the given wavelengths.

    Parameters
    ----------
    wavelength_nm : array_like
        Wavelengths in nm.

    Returns
    -------
    numpy.ndarray of shape (..., 3)
        The three functions, from the multi-lobe fit of Wyman, Sloan & Shirley (2013, eq. 4).
    """
    lam = np.asarray(wavelength_nm, dtype=float)
    return np.stack([_lobes(lam, _LOBES_X), _lobes(lam, _LOBES_Y), _lobes(lam, _LOBES_Z)], axis=-1)


_CMF = cie1931_cmf(WAVELENGTH_NM)  # (n_lambda, 3)


def blackbody_xyz(teff) -> np.ndarray:
    """CIE XYZ tristimulus values of a blackbody, normalised to Y = 1.

    Parameters
    ----------
    teff : array_like
        Temperatures in K (> 0).

    Returns
    -------
    numpy.ndarray of shape (n, 3)
    """
    t = np.atleast_1d(np.asarray(teff, dtype=float)).ravel()
    lam = WAVELENGTH_NM
    # Planck's law up to a constant; the lambda^-5 factor is scaled to 1 at 555 nm so that
    # nothing under- or overflows for 500 K .. 1e6 K.
    x = _C2_NM_K / (lam[None, :] * t[:, None])
    spec = (lam[None, :] / 555.0) ** -5 / np.expm1(x)
    xyz = spec @ _CMF
    return xyz / xyz[:, 1:2]


def xyz_to_srgb(xyz) -> np.ndarray:
    """Gamma-encoded sRGB in [0, 1] from XYZ, clipped to the gamut, brightest channel = 1.

    Parameters
    ----------
    xyz : array_like of shape (n, 3)

    Returns
    -------
    numpy.ndarray of shape (n, 3)
    """
    return _encode(_linear_normalised(xyz))


def _linear_normalised(xyz):
    lin = np.asarray(xyz, dtype=float) @ XYZ_TO_LINEAR_SRGB.T
    lin = np.clip(lin, 0.0, None)
    peak = lin.max(axis=1, keepdims=True)
    return lin / np.where(peak > 0, peak, 1.0)


def _encode(lin):
    """sRGB transfer curve (IEC 61966-2-1)."""
    return np.where(lin <= 0.0031308, 12.92 * lin, 1.055 * np.power(lin, 1 / 2.4) - 0.055)


def _exact(teff: np.ndarray) -> np.ndarray:
    return xyz_to_srgb(blackbody_xyz(teff))


_GRID_RGB = None


def blackbody_colour(teff) -> np.ndarray:
    """sRGB display colour of a blackbody of temperature ``teff`` (vectorised).

    Parameters
    ----------
    teff : array_like or astropy.units.Quantity
        Effective temperature(s) in K. Values outside 500 K .. 1e6 K are clipped to that range;
        NaN gives a neutral grey (0.5, 0.5, 0.5).

    Returns
    -------
    numpy.ndarray of shape (n, 3)
        Red, green, blue in [0, 1] (gamma-encoded sRGB), one row per input value. A scalar input
        still gives shape (1, 3).

    Notes
    -----
    Up to 2048 values are computed exactly; for longer inputs the linear sRGB values are
    interpolated in log T on a 6001-point grid (step 0.00055 dex), which differs from the exact
    result by less than 1e-3 in every channel.
    """
    global _GRID_RGB
    if hasattr(teff, "unit"):
        teff = teff.to_value("K")
    t = np.atleast_1d(np.asarray(teff, dtype=float)).ravel()
    if np.any(t <= 0):
        raise HrstageInputError("blackbody_colour: temperatures must be positive (K)")
    bad = ~np.isfinite(t)
    logt = np.log10(np.clip(np.where(bad, 5772.0, t), 500.0, 1.0e6))
    if logt.size <= _EXACT_LIMIT:
        rgb = _exact(10.0**logt)
    else:
        if _GRID_RGB is None:
            _GRID_RGB = _linear_normalised(blackbody_xyz(10.0**_GRID_LOGT))
        # interpolate the linear values, then encode (the transfer curve is steep near 0)
        rgb = _encode(np.stack([np.interp(logt, _GRID_LOGT, _GRID_RGB[:, i]) for i in range(3)], axis=1))
    rgb[bad] = 0.5
    return rgb
