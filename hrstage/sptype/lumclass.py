"""Luminosity classes: numeric scale, normalised spelling and the stage each class implies.

Numeric scale (our own, in the spirit of the encoding suggested in the project's MK-type research
note): hypergiant ``0`` = 0, ``Ia`` = 1, ``Iab`` = 1.5, ``Ib`` = 2, ``II`` = 3, ``III`` = 4,
``IV`` = 5, ``V`` = 6, ``VI`` (cool subdwarf) = 7, ``VII`` = 8, ``VIII`` = 9 (the hot-subdwarf
classes of Drilling et al. 2013, A&A 551, A31). Inside the classes II–V the Keenan sub-classes
``a``/``ab``/``b`` shift by -0.25 / 0 / +0.25 (``IIIa`` = 3.75, ``IIIb`` = 4.25). A bare ``I``
(supergiant of unknown sub-class) spans 1–2. Larger numbers are fainter.
"""

from __future__ import annotations

import re

from ..stages import (
    BRIGHT_GIANT,
    GIANT,
    HOT_SUBDWARF,
    MAIN_SEQUENCE,
    STAGES,
    SUBDWARF,
    SUBGIANT,
    SUPERGIANT,
    WHITE_DWARF,
)

__all__ = [
    "LUM_BASE",
    "lum_one_range",
    "normalise_lumclass",
    "expected_stage",
    "expected_stages",
    "CHECK_CLASSES",
]

#: numeric value of the main classes (sub-class shifts handled in :func:`lum_one_range`)
LUM_BASE = {
    "0": 0.0,
    "Ia": 1.0,
    "Iab": 1.5,
    "Ib": 2.0,
    "II": 3.0,
    "III": 4.0,
    "IV": 5.0,
    "V": 6.0,
    "VI": 7.0,
    "VII": 8.0,
    "VIII": 9.0,
}

_HYPER = {"0", "0-Ia", "Ia-0", "Ia0", "Ia+"}
_SUBSHIFT = {"a": -0.25, "ab": 0.0, "b": 0.25}
_ONE = re.compile(r"^(VIII|VII|VI|IV|V|III|II|I)(ab|a|b)?$")

#: the classes the consistency check calibrates, brightest first (see ``calibration``)
CHECK_CLASSES = ("Ia", "Iab", "Ib", "II", "III", "IV", "V")


def lum_one_range(token: str) -> tuple[float, float] | None:
    """Numeric (lo, hi) of one luminosity-class token (``'IIIb'``, ``'Ia0'``, ``'I'``), or None."""
    if token in _HYPER:
        return (0.0, 0.0)
    m = _ONE.match(token)
    if m is None:
        return None
    roman, sub = m.group(1), m.group(2)
    if roman == "I":
        if sub is None:
            return (1.0, 2.0)
        v = LUM_BASE["I" + sub]
        return (v, v)
    v = LUM_BASE[roman] + (_SUBSHIFT[sub] if sub else 0.0)
    return (v, v)


def normalise_one(token: str) -> str:
    """Canonical spelling of one class token: every hypergiant spelling becomes ``'0'``."""
    return "0" if token in _HYPER else token


def normalise_lumclass(lo_token: str, hi_token: str | None = None) -> str:
    """Canonical spelling of a class or a class range, brighter class first (``'IV/V'`` -> ``'IV-V'``)."""
    a = normalise_one(lo_token)
    if hi_token is None:
        return a
    b = normalise_one(hi_token)
    ra, rb = lum_one_range(a), lum_one_range(b)
    if ra is not None and rb is not None and ra[0] > rb[0]:
        a, b = b, a
    return a if a == b else f"{a}-{b}"


#: numeric intervals of the luminosity-class scale and the stage of each (brightest first)
_STAGE_BANDS = (
    (-1.0, 2.5, SUPERGIANT),
    (2.5, 3.5, BRIGHT_GIANT),
    (3.5, 4.5, GIANT),
    (4.5, 5.5, SUBGIANT),
    (5.5, 6.5, MAIN_SEQUENCE),
    (6.5, 7.5, SUBDWARF),
    (7.5, 10.0, HOT_SUBDWARF),
)


def expected_stages(lumclass: str | None) -> tuple[str, ...]:
    """All stage names a luminosity class (or class range) allows, brightest first.

    ``'IV-V'`` -> ``('subgiant', 'main_sequence')``; ``'III'`` -> ``('giant',)``; ``'II-IV'``
    -> ``('bright_giant', 'giant', 'subgiant')``; an empty or unknown class -> ``()``.
    """
    if not lumclass:
        return ()
    lc = str(lumclass)
    if lc.startswith("D") or lc == "WD":
        return (STAGES[WHITE_DWARF],)
    if lc in ("sdO", "sdB", "sdOB"):
        return (STAGES[HOT_SUBDWARF],)
    if lc in ("sd", "esd", "usd"):
        return (STAGES[SUBDWARF],)
    parts = [lc] if lc in _HYPER else lc.split("-")
    ranges = [lum_one_range(p) for p in parts]
    if any(r is None for r in ranges):
        return ()
    lo = min(r[0] for r in ranges)
    hi = max(r[1] for r in ranges)
    return tuple(STAGES[code] for a, b, code in _STAGE_BANDS if lo < b and hi >= a)


def expected_stage(lumclass: str | None) -> str:
    """Stage name of :mod:`hrstage.stages` implied by a luminosity class.

    ``V`` -> ``main_sequence``, ``IV`` -> ``subgiant``, ``III`` -> ``giant``, ``II`` ->
    ``bright_giant``, ``Ia``/``Iab``/``Ib``/``I``/``0`` -> ``supergiant``, ``VI``/``sd``/``esd``/
    ``usd`` -> ``subdwarf``, ``VII``/``VIII``/``sdO``/``sdB``/``sdOB`` -> ``hot_subdwarf``, ``D``
    (any white-dwarf class) -> ``white_dwarf``.

    A class range that spans two stages gives both joined by ``'|'``, brightest first
    (``'IV-V'`` -> ``'subgiant|main_sequence'``, ``'II-III'`` -> ``'bright_giant|giant'``); a
    range inside one stage gives that stage (``'Iab-Ib'`` -> ``'supergiant'``). No class, or a
    class we cannot read, gives ``''``.
    """
    return "|".join(expected_stages(lumclass))
