"""Vectorised stage classification (layer 3).

- :func:`classify_hr` -- labels, probabilities (seeded Monte Carlo over correlated errors), mass
  estimates with their method, flags with readable reasons;
- :func:`logl_from_logg` -- luminosity from Teff and log g with the map's masses;
- :func:`estimate_mass`, :func:`explain_star`;
- :class:`StageClassifier` -- the scikit-learn estimator.

Labels are indicative (analytic single-star fits); they do not replace a spectroscopic analysis.
"""

from ._core import FEH_GRID, OPTIONS, ClassificationResult, classify_hr, estimate_mass
from ._explain import explain_star
from ._logg import logl_from_logg


def __getattr__(name):
    # scikit-learn is imported only when the estimator is asked for: it costs seconds at start-up
    # of the command line, which never needs it.
    if name == "StageClassifier":
        from ._estimator import StageClassifier

        return StageClassifier
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


__all__ = [
    "classify_hr",
    "ClassificationResult",
    "logl_from_logg",
    "estimate_mass",
    "explain_star",
    "StageClassifier",
    "FEH_GRID",
    "OPTIONS",
]
