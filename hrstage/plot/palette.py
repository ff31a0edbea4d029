"""Colours and markers of the stages on hrstage figures.

Two schemes, each giving every stage a colour and a marker of its own, so a figure still reads
when printed in grey (the markers differ) and, with ``"colourblind"``, for readers with the
common colour-vision deficiencies:

``"default"``
    hrstage's own scheme: cool-to-warm hues that follow the life of a star (blue-green main
    sequence, ochre subgiants, rust giants, brick bright giants, plum supergiants, slate white
    dwarfs, sage subdwarfs, violet hot subdwarfs, grey unclassified).
``"colourblind"``
    built on the eight-colour palette of Okabe & Ito (2008, "Color Universal Design (CUD): how to
    make figures and presentations that are friendly to colorblind people", J*FLY data depository
    for Drosophila researchers), recommended for figures by Wong (2011, Nature Methods 8, 441).
    Their yellow is kept for the least common stage and always drawn with a dark edge.

Both schemes are plain dictionaries, so a figure can be restyled by passing a modified copy
(``palette=PALETTES["default"].replace(giant=StageStyle("#000000", "s", "Giant"))``) or by
changing the returned artists.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from types import MappingProxyType

from ..errors import HrstageInputError
from ..stages import LABELS, STAGES

__all__ = ["StageStyle", "Palette", "PALETTES", "get_palette", "FLAG_MARKS"]


@dataclass(frozen=True)
class StageStyle:
    """How one stage is drawn: face colour (hex), matplotlib marker code and legend label."""

    colour: str
    marker: str
    label: str


@dataclass(frozen=True)
class Palette:
    """A named set of :class:`StageStyle`, one per stage name of :mod:`hrstage.stages`.

    Attributes
    ----------
    name : str
    styles : mapping of stage name -> StageStyle
    edge : str
        Edge colour of the points (keeps pale colours visible on white).
    region_alpha : float
        Opacity of the filled stage regions.
    curve : str
        Colour of the boundary curves.
    """

    name: str
    styles: MappingProxyType
    edge: str = "#303030"
    region_alpha: float = 0.13
    curve: str = "#262626"
    notes: str = field(default="", compare=False)

    def __post_init__(self):
        missing = [s for s in STAGES if s not in self.styles]
        if missing:
            raise HrstageInputError(f"palette {self.name!r}: no style for stage(s) {', '.join(missing)}")
        object.__setattr__(self, "styles", MappingProxyType(dict(self.styles)))

    def __getitem__(self, stage: str) -> StageStyle:
        try:
            return self.styles[stage]
        except KeyError:
            raise HrstageInputError(
                f"unknown stage {stage!r}; expected one of {', '.join(STAGES)}"
            ) from None

    def colour(self, stage: str) -> str:
        return self[stage].colour

    def marker(self, stage: str) -> str:
        return self[stage].marker

    def replace(self, **styles: StageStyle) -> "Palette":
        """A copy with some stage styles replaced (keyword = stage name)."""
        new = dict(self.styles)
        for key, value in styles.items():
            if key not in new:
                raise HrstageInputError(f"unknown stage {key!r} in palette.replace")
            new[key] = value
        return replace(self, styles=new)


# One marker per stage, the same in both schemes so a reader who learns one learns both.
_MARKERS = {
    "main_sequence": "o",
    "subgiant": "D",
    "giant": "s",
    "bright_giant": "p",
    "supergiant": "*",
    "white_dwarf": "v",
    "subdwarf": "h",
    "hot_subdwarf": "^",
    "pre_main_sequence": "P",
    "unclassified": "X",
}

# hrstage's own colours (chosen for this project).
_DEFAULT = {
    "main_sequence": "#2a7f8f",   # deep teal
    "subgiant": "#c9a227",        # ochre
    "giant": "#c0622b",           # rust
    "bright_giant": "#9e2a2b",    # brick
    "supergiant": "#6b3fa0",      # plum
    "white_dwarf": "#4a6fa5",     # slate blue
    "subdwarf": "#7a9a4a",        # sage
    "hot_subdwarf": "#b05fc4",    # orchid
    "pre_main_sequence": "#d9738f",  # rose
    "unclassified": "#9a9a9a",    # grey
}

# Okabe & Ito (2008) colours: black #000000, orange #E69F00, sky blue #56B4E9, bluish green
# #009E73, yellow #F0E442, blue #0072B2, vermilion #D55E00, reddish purple #CC79A7; grey for
# "unclassified" (not part of their set); wine #882255 from Tol's (2021, SRON/EPS/TN/09-002)
# colour-blind-safe "muted" scheme for the tenth stage.
_COLOURBLIND = {
    "main_sequence": "#0072B2",   # blue
    "subgiant": "#009E73",        # bluish green
    "giant": "#E69F00",           # orange
    "bright_giant": "#D55E00",    # vermilion
    "supergiant": "#CC79A7",      # reddish purple
    "white_dwarf": "#56B4E9",     # sky blue
    "subdwarf": "#000000",        # black
    "hot_subdwarf": "#F0E442",    # yellow
    "pre_main_sequence": "#882255",  # wine (Tol 2021 "muted" scheme: the Okabe & Ito eight are used up)
    "unclassified": "#999999",    # grey
}

OKABE_ITO = ("#000000", "#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00", "#CC79A7")


# Styles for a stage of hrstage.stages that has no colour of its own above yet (a stage added
# later still gets a distinct colour, marker and label instead of breaking every figure).
_RESERVE_COLOURS = ("#8c6d31", "#d6616b", "#3b7dd8", "#2f9e55", "#a05195")
_RESERVE_MARKERS = ("d", "<", ">", "8", "H", "P")


def _build(name, colours, notes=""):
    extra = [s for s in STAGES if s not in colours or s not in _MARKERS]
    styles = {}
    for s in STAGES:
        if s in extra:
            markers = [m for m in _RESERVE_MARKERS if m not in _MARKERS.values()] or list(_RESERVE_MARKERS)
            k = extra.index(s)
            styles[s] = StageStyle(_RESERVE_COLOURS[k % len(_RESERVE_COLOURS)], markers[k % len(markers)],
                                   LABELS.get(s, s.replace("_", " ").capitalize()))
        else:
            styles[s] = StageStyle(colours[s], _MARKERS[s], LABELS.get(s, s.replace("_", " ").capitalize()))
    return Palette(name=name, styles=styles, notes=notes)


PALETTES = MappingProxyType(
    {
        "default": _build("default", _DEFAULT, "hrstage's own stage colours"),
        "colourblind": _build(
            "colourblind", _COLOURBLIND, "Okabe & Ito (2008) colours, distinct markers per stage"
        ),
    }
)

#: How flagged stars are marked: flag-group name -> (marker, edge colour, line width, legend text).
#: Drawn as open symbols around the point, so they never hide its stage colour.
FLAG_MARKS = MappingProxyType(
    {
        "cool_but_massive": ("o", "#d7191c", 0.7, "cool but massive"),
        "sptype_conflict": ("s", "#1a1a1a", 1.1, "MK type in conflict"),
        "poor_distance": ("D", "#7f7f7f", 0.9, "poor parallax"),
    }
)


def get_palette(palette) -> Palette:
    """Return a :class:`Palette` from a name in :data:`PALETTES` or a Palette itself."""
    if isinstance(palette, Palette):
        return palette
    try:
        return PALETTES[palette]
    except (KeyError, TypeError):
        raise HrstageInputError(
            f"unknown palette {palette!r}; expected one of {', '.join(PALETTES)} or a Palette"
        ) from None
