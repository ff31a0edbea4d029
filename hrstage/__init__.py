"""hrstage: evolutionary-stage labels for catalogue stars.

Labels are indicative: they come from analytic stellar relations and the star's position on the
HR diagram, and do not replace a spectroscopic analysis.
"""

from ._version import __version__

__all__ = ["classify", "__version__"]


def classify(table, **options):
    """Label every star of an astropy Table with its evolutionary stage.

    See :func:`hrstage.engine.classify_table` for the options.
    """
    from .engine.chunk import classify_table

    return classify_table(table, **options)
