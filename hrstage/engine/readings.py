"""Stars with two photometric readings: carry the other reading through the routes and mix the
stage probabilities of both (see ``docs/derive.md``, "Blue and faint stars").

A Gaia or Johnson row whose colour and absolute magnitude fit both the white-dwarf reading and a
hot-star / subdwarf / cool reading within the errors (the less probable one keeping >= 5 %) comes
from :mod:`hrstage.derive` with the TWO_READINGS flag and ``other_*`` extras. Its HR position, stage
and mass are those of the more probable reading; its stage probabilities are the mixture
``(1 - p_other) * P(stage | this reading) + p_other * P(stage | other reading)``, the other reading
classified with the same options.
"""

from __future__ import annotations

import numpy as np

from ..stages import STAGES

KEYS = ("logt", "logl", "logt_err", "logl_err", "corr", "p")


def carry_other(out, pos, idx, good):
    """Keep the other reading of a route's rows (``idx``: their rows in the chunk; ``good``: those
    the route placed) in ``out.extra["other_reading"]`` with chunk row numbers."""
    other = pos.extra.get("other_reading") if pos.extra else None
    if other is None:
        return
    keep = good[other["rows"]]
    add = {"rows": idx[other["rows"][keep]], **{k: np.asarray(other[k], dtype=float)[keep] for k in KEYS}}
    have = out.extra.get("other_reading")
    if have is not None:
        add = {k: np.concatenate([have[k], add[k]]) for k in add}
    out.extra["other_reading"] = add


def mix_other_reading(cols, pos, classify):
    """Mix the stage probabilities of the rows with another reading, in ``cols`` (in place).

    ``classify(rows, logt, logl, logt_err, logl_err, corr)`` classifies the other reading of those
    rows and returns a :class:`~hrstage.classifier.ClassificationResult`.
    """
    other = pos.extra.get("other_reading") if pos.extra else None
    if other is None:
        return
    ok = np.isfinite(other["p"]) & np.isfinite(other["logt"]) & np.isfinite(other["logl"])
    rows = other["rows"][ok]
    if rows.size == 0:
        return
    res = classify(rows, other["logt"][ok], other["logl"][ok], other["logt_err"][ok], other["logl_err"][ok],
                   np.nan_to_num(other["corr"][ok]))
    w = other["p"][ok]
    for k, s in enumerate(STAGES):
        col = f"prob_{s}"
        if col not in cols:
            continue
        mixed = np.asarray(cols[col], dtype=float).copy()
        mixed[rows] = (1.0 - w) * mixed[rows] + w * res.proba[:, k]
        cols[col] = mixed.astype(np.asarray(cols[col]).dtype)
    if "stage_prob" in cols and hasattr(cols.get("stage"), "codes"):
        codes = np.asarray(cols["stage"].codes)[rows]
        sp = np.asarray(cols["stage_prob"], dtype=float).copy()
        probs = np.stack([np.asarray(cols[f"prob_{s}"], dtype=float)[rows] for s in STAGES], axis=1)
        sp[rows] = probs[np.arange(rows.size), codes]
        cols["stage_prob"] = sp.astype(np.asarray(cols["stage_prob"]).dtype)
