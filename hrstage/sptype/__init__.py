"""MK spectral types: parse catalogue strings, calibrate them, check them against the HR diagram.

Layer 4 of hrstage (see ``docs/sptype.md``). The verdicts are indicative: a type that
"conflicts" with the HR position may be a wrong type, a wrong parallax, an unresolved binary or a
star the calibration does not describe; none of this replaces a spectroscopic analysis.
"""

from .calibration import Calibration, calibration, sigma_logl, sigma_logt, wd_teff_from_index
from .check import VERDICTS, TypeCheck, check_types, class_separation, summarise_checks
from .lumclass import expected_stage, expected_stages
from .parser import SpType, parse, parse_many

__all__ = [
    "SpType",
    "parse",
    "parse_many",
    "expected_stage",
    "expected_stages",
    "check_types",
    "summarise_checks",
    "class_separation",
    "TypeCheck",
    "VERDICTS",
    "Calibration",
    "calibration",
    "sigma_logl",
    "sigma_logt",
    "wd_teff_from_index",
]
