"""Flag bits shared by every layer.

Each star carries an integer ``flags`` column: the OR of the bits below. ``describe(bits)``
turns a bit pattern into readable text; the layer that raises a flag usually also writes a
specific reason (with numbers) into the reason column.
"""

from __future__ import annotations

import numpy as np

# --- classification (layer 3) -------------------------------------------------------------
COOL_BUT_MASSIVE = 1 << 0       #: cool star too luminous / too massive for a MS star of its Teff
POSSIBLE_BINARY = 1 << 1        #: up to ~0.3 dex above the main sequence: unresolved binary?
OUTSIDE_VALIDITY = 1 << 2       #: mass or metallicity outside the fits' validity range (clipped)
NEAR_BOUNDARY = 1 << 3          #: within the uncertainty of a stage boundary
METALLICITY_CLIPPED = 1 << 4    #: [Fe/H] outside -2.3..+0.5 (Z 1e-4..0.063), clipped to the nearest limit
NO_METALLICITY = 1 << 5         #: no [Fe/H] given, solar assumed
LOW_PROBABILITY = 1 << 6        #: best stage has probability < 0.6
YOUNG_OR_EVOLVED = 1 << 7       #: position shared by young (pre-main-sequence) and evolved stars
HB_OR_MAIN_SEQUENCE = 1 << 18   #: metal-poor position shared by blue horizontal-branch and main-sequence stars
# --- derived inputs (layer 5) -------------------------------------------------------------
LOW_PARALLAX_SNR = 1 << 8       #: parallax_over_error below the threshold: distance unreliable
NONPOSITIVE_PARALLAX = 1 << 9   #: parallax <= 0: no distance, no luminosity
COLOUR_OUT_OF_RANGE = 1 << 10   #: colour outside the colour-Teff relation's range (extrapolated/fallback)
BC_FALLBACK = 1 << 11           #: bolometric correction outside its fit range, fallback used
NO_EXTINCTION = 1 << 12         #: no extinction given, none applied
LOGG_ITERATION = 1 << 13        #: log g -> L iteration did not converge
COLOUR_SATURATED = 1 << 14      #: colour barely tracks Teff here (red giant B-V turnover, O-B star BP-RP)
TWO_READINGS = 1 << 15          #: photometry fits two readings (white dwarf / hot star or subdwarf)
# --- input problems (layer 6) -------------------------------------------------------------
MISSING_INPUT = 1 << 16         #: a needed value is missing / masked / NaN
BAD_INPUT = 1 << 17             #: a needed value is non-physical (negative L, sentinel, inf)
# --- spectral type (layer 4) --------------------------------------------------------------
SPTYPE_CONFLICT = 1 << 20       #: catalogued MK type conflicts with the HR position
SPTYPE_UNPARSED = 1 << 21       #: MK type present but could not be parsed

DESCRIPTIONS = {
    COOL_BUT_MASSIVE: "cool but massive: too luminous or too massive for a main-sequence star of its Teff",
    POSSIBLE_BINARY: "possible unresolved binary (just above the main sequence)",
    OUTSIDE_VALIDITY: "outside the validity range of the stellar relations (extrapolated or clipped)",
    NEAR_BOUNDARY: "near a stage boundary",
    METALLICITY_CLIPPED: "metallicity outside [Fe/H] -2.3..+0.5 (Z 1e-4..0.063 on the fits' scale), clipped",
    NO_METALLICITY: "no [Fe/H]; solar metallicity assumed",
    LOW_PROBABILITY: "label uncertain (best stage probability < 0.6)",
    YOUNG_OR_EVOLVED: "young (pre-main-sequence) or evolved: the HR position cannot tell them apart",
    HB_OR_MAIN_SEQUENCE: "blue horizontal branch or main sequence: at this metallicity the core-helium-burning band "
                         "overlaps the main sequence and the HR position cannot tell them apart (log g can)",
    LOW_PARALLAX_SNR: "parallax signal-to-noise below threshold: luminosity unreliable",
    NONPOSITIVE_PARALLAX: "zero or negative parallax: no distance, no luminosity",
    COLOUR_OUT_OF_RANGE: "colour outside the calibrated range of the colour-Teff relation",
    BC_FALLBACK: "bolometric correction outside its fit range; fallback relation used",
    NO_EXTINCTION: "no extinction given; none applied",
    LOGG_ITERATION: "log g to luminosity iteration did not converge",
    COLOUR_SATURATED: "colour saturated, Teff indicative: a giant's B-V that late-M giants (3000-3650 K, larger "
                      "bolometric correction) share, or an O-B star's nearly flat Gaia BP-RP (wide Teff error)",
    TWO_READINGS: "colour and absolute magnitude fit two readings (white dwarf or not) within the errors; "
                  "the stage probabilities mix both",
    MISSING_INPUT: "a required input is missing",
    BAD_INPUT: "a required input is non-physical",
    SPTYPE_CONFLICT: "catalogued spectral type conflicts with the HR position",
    SPTYPE_UNPARSED: "catalogued spectral type could not be parsed",
}

ALL_BITS = tuple(DESCRIPTIONS)


def names(bits: int) -> list:
    """Names of the set bits of one flag value (``["COOL_BUT_MASSIVE", "NO_METALLICITY"]``), in
    bit order: the constants of this module."""
    bits = int(bits)
    table = {v: k for k, v in globals().items() if k.isupper() and isinstance(v, int) and v in DESCRIPTIONS}
    return [table[b] for b in sorted(DESCRIPTIONS) if bits & b and b in table]


def describe(bits: int) -> str:
    """Readable text for one flag value: the descriptions of its set bits, joined by '; '."""
    bits = int(bits)
    return "; ".join(text for bit, text in DESCRIPTIONS.items() if bits & bit)


def or_flag(flags, where, bits) -> None:
    """``flags |= bits`` on the rows where ``where`` is true (in place, one pass, no temporary;
    a boolean-mask ``flags[where] |= bits`` gathers and scatters the rows)."""
    np.bitwise_or(flags, np.int64(bits), out=flags, where=np.asarray(where, dtype=bool))


def describe_many(bits) -> np.ndarray:
    """Vectorised :func:`describe` (works on the unique values only, so it is cheap)."""
    bits = np.asarray(bits, dtype=np.int64)
    texts, codes = describe_codes(bits)
    return texts[codes.reshape(bits.shape)]


def describe_codes(bits):
    """``(texts, codes)``: the description of each distinct combination of bits (object array)
    and, per entry, the index of its text; one :func:`describe` call per distinct combination."""
    bits = np.asarray(bits, dtype=np.int64).reshape(-1)
    uniq, inv = np.unique(bits, return_inverse=True)
    return np.array([describe(int(b)) for b in uniq], dtype=object), inv.reshape(-1)
