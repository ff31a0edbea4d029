"""Giant-branch names and integer codes shared by every layer (the ``branch`` column).

A giant's branch says which nuclear-burning phase its position is most likely in: climbing the red
giant branch (hydrogen shell around an inert helium core), core-helium burning (red clump,
including the secondary clump; horizontal branch of low-mass stars; blue loop of stars too massive
for a degenerate helium flash, hotter than the clump), or on the asymptotic giant
branch (early / thermally pulsing). ``unresolved`` marks a giant whose position and errors cannot
decide; ``not_giant`` every star whose stage is not a giant-class stage. The names are the
lower-case trade terms; ``BRANCHES[code]`` gives the name back.
"""

BRANCHES = (
    "red_giant_branch",
    "red_clump",
    "horizontal_branch",
    "blue_loop",
    "early_agb",
    "thermally_pulsing_agb",
    "post_agb",
    "unresolved",
    "not_giant",
)

RED_GIANT_BRANCH, RED_CLUMP, HORIZONTAL_BRANCH, BLUE_LOOP, EARLY_AGB, TP_AGB, POST_AGB, UNRESOLVED, NOT_GIANT = range(
    len(BRANCHES)
)

CODE = {name: i for i, name in enumerate(BRANCHES)}

#: the three evolutionary hypotheses whose probabilities are reported
HYPOTHESES = ("rgb", "core_he", "agb")

#: core-helium-burning branches (mass from the core-He-burning relations)
CORE_HE_BRANCHES = (RED_CLUMP, HORIZONTAL_BRANCH, BLUE_LOOP)

#: Short human-readable labels for plots and reports.
LABELS = {
    "red_giant_branch": "Red giant branch",
    "red_clump": "Red clump",
    "horizontal_branch": "Horizontal branch",
    "blue_loop": "Blue loop",
    "early_agb": "Early AGB",
    "thermally_pulsing_agb": "Thermally pulsing AGB",
    "post_agb": "Post-AGB",
    "unresolved": "Branch unresolved",
    "not_giant": "Not a giant",
}
