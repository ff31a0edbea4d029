"""Stage names and integer codes shared by every layer.

The names are the lower-case trade terms of the public interface contract. Integer codes are
used inside the vectorised classifier; ``STAGES[code]`` gives the name back. Code against the
names (``CODE[name]``), never against the numbers or the number of stages: stages may be added.
"""

STAGES = (
    "main_sequence",
    "subgiant",
    "giant",
    "bright_giant",
    "supergiant",
    "white_dwarf",
    "subdwarf",
    "hot_subdwarf",
    "pre_main_sequence",
    "unclassified",
)

(MAIN_SEQUENCE, SUBGIANT, GIANT, BRIGHT_GIANT, SUPERGIANT, WHITE_DWARF, SUBDWARF, HOT_SUBDWARF, PRE_MAIN_SEQUENCE,
 UNCLASSIFIED) = range(len(STAGES))

CODE = {name: i for i, name in enumerate(STAGES)}

#: Short human-readable labels for plots and reports.
LABELS = {
    "main_sequence": "Main sequence",
    "subgiant": "Subgiant",
    "giant": "Giant",
    "bright_giant": "Bright giant",
    "supergiant": "Supergiant",
    "white_dwarf": "White dwarf",
    "subdwarf": "Subdwarf",
    "hot_subdwarf": "Hot subdwarf",
    "pre_main_sequence": "Pre-main sequence",
    "unclassified": "Unclassified",
}
