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

OTHER_KEYS = ("other_logt", "other_logl", "other_logt_err", "other_logl_err", "other_corr", "p_other")


def carry_other(out, pos, ok_rows, good):
    """Copy the other-reading extras of a route's rows (``good`` of its subset) into ``out.extra``."""
    if not pos.extra or "p_other" not in pos.extra:
        return
    n = len(out)
    for key in OTHER_KEYS:
        full = out.extra.setdefault(key, np.full(n, np.nan))
        full[ok_rows] = np.asarray(pos.extra[key], dtype=float)[good]


def mix_other_reading(cols, pos, classify):
    """Mix the stage probabilities of the rows with another reading, in ``cols`` (in place).

    ``classify(rows, logt, logl, logt_err, logl_err, corr)`` classifies the other reading of those
    rows and returns a :class:`~hrstage.classifier.ClassificationResult`.
    """
    p = pos.extra.get("p_other") if pos.extra else None
    if p is None:
        return
    rows = np.flatnonzero(np.isfinite(p) & np.isfinite(pos.extra["other_logt"]) & np.isfinite(pos.logt))
    if rows.size == 0:
        return
    e = pos.extra
    res = classify(rows, e["other_logt"][rows], e["other_logl"][rows], e["other_logt_err"][rows],
                   e["other_logl_err"][rows], np.nan_to_num(e["other_corr"][rows]))
    w = p[rows]
    for k, s in enumerate(STAGES):
        col = f"prob_{s}"
        if col not in cols:
            continue
        mixed = np.asarray(cols[col], dtype=float).copy()
        mixed[rows] = (1.0 - w) * mixed[rows] + w * res.proba[:, k]
        cols[col] = mixed.astype(np.asarray(cols[col]).dtype)
    if "stage_prob" in cols and "stage" in cols:
        codes = np.asarray(cols["stage"].codes)[rows] if hasattr(cols["stage"], "codes") else None
        if codes is not None:
            sp = np.asarray(cols["stage_prob"], dtype=float).copy()
            probs = np.stack([np.asarray(cols[f"prob_{s}"], dtype=float)[rows] for s in STAGES], axis=1)
            sp[rows] = probs[np.arange(rows.size), codes]
            cols["stage_prob"] = sp.astype(np.asarray(cols["stage_prob"]).dtype)
