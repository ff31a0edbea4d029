"""Defaults shared by every face (command line, Python API, ``explain``, Dask) and the checks on
user-given run options.

``DEFAULT_DRAWS`` is the one default number of Monte Carlo draws per star for the stage
probabilities: 128. Decided because every star with known errors should get a probability per
stage, and it is cheap (the classifier skips the draws of stars whose whole error box lies in one
stage; measured in ``docs/cli.md``); the resolution 1/128 is below the 0.6 low-probability
threshold's meaningful precision. ``--draws 0`` / ``n_draws=0`` gives point labels. The array
kernel :func:`hrstage.classifier.classify_hr` is the exception: a building block, it draws only
when asked (``n_draws=0``).
"""

from __future__ import annotations

import math

from .errors import HrstageInputError

#: Monte Carlo draws per star for the stage probabilities, everywhere a run is started.
DEFAULT_DRAWS = 128

#: Seed of the draws.
DEFAULT_SEED = 20240601

#: [Fe/H] values a star can have. The most metal-poor stars known have [Fe/H] below -7 (an upper
#: limit) and the most metal-rich about +0.6 (from memory); anything outside is a mistake (a
#: fill value, a Z given as [Fe/H], a typo), not a star. Inside the range but outside the fits'
#: validity (Z 1e-4 .. 0.03) a value is clipped and flagged.
FEH_RANGE = (-8.0, 1.0)


def check_feh(value, what: str = "[Fe/H]") -> float:
    """``value`` as a float, or a one-line :class:`~hrstage.errors.HrstageInputError` when it is
    not a finite number inside :data:`FEH_RANGE`."""
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise HrstageInputError(f"{what} = {value!r} is not a number") from None
    if not math.isfinite(x):
        raise HrstageInputError(f"{what} = {value!r} is not a finite number; give a value in dex "
                                f"between {FEH_RANGE[0]:+g} and {FEH_RANGE[1]:+g}, or leave it out for solar")
    if not FEH_RANGE[0] <= x <= FEH_RANGE[1]:
        raise HrstageInputError(f"{what} = {x:+g} dex is impossible for a star; expected "
                                f"{FEH_RANGE[0]:+g} .. {FEH_RANGE[1]:+g} (a value in dex, not Z)")
    return x


def check_draws(value, what: str = "number of draws") -> int:
    """``value`` as a whole number >= 0, or a one-line input error."""
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise HrstageInputError(f"{what} = {value!r} is not a whole number") from None
    if not math.isfinite(x) or x != int(x) or x < 0:
        raise HrstageInputError(f"{what} = {value!r}: expected a whole number >= 0")
    return int(x)
