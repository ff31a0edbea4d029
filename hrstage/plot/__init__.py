"""Annotated HR, Kiel and colour-magnitude diagrams (matplotlib).

Functions return a :class:`matplotlib.axes.Axes`; they never call ``show`` and never change
matplotlib's global settings. See ``docs/plot.md`` for the palette, markers, curve names and how
to restyle a figure.

Stage labels and regions are indicative: they come from analytic stellar relations and do not
replace a spectroscopic analysis.
"""

from .branches import BRANCH_COLOURS, branch_diagram, draw_branches
from .colour import blackbody_colour, cie1931_cmf
from .hrd import DEFAULT_RADII, FLAG_GROUPS, colour_magnitude_diagram, hr_diagram, kiel_diagram
from .output import write_figure
from .palette import FLAG_MARKS, PALETTES, Palette, StageStyle, get_palette

__all__ = [
    "hr_diagram",
    "kiel_diagram",
    "colour_magnitude_diagram",
    "branch_diagram",
    "draw_branches",
    "BRANCH_COLOURS",
    "write_figure",
    "blackbody_colour",
    "cie1931_cmf",
    "PALETTES",
    "Palette",
    "StageStyle",
    "get_palette",
    "FLAG_MARKS",
    "FLAG_GROUPS",
    "DEFAULT_RADII",
]
