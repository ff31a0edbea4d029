"""Issue 16 item 16: negative or infinite uncertainties were treated as exact (errors 0,
stage_prob 1.0, no flag). Such a row keeps the label of its position but gets no false certainty:
probabilities and errors unknown (NaN), BAD_INPUT, and a reason naming the column."""

from __future__ import annotations

import numpy as np
from astropy.table import Table

from hrstage import flags as F
from hrstage.engine import classify_table


def test_unusable_uncertainties_are_flagged_not_exact():
    t = Table({"star": ["neg_teff_err", "inf_lum_err", "word_err", "good", "no_err"],
               "teff": [5000.0, 5000.0, 5000.0, 5000.0, 5000.0],
               "teff_err": np.array(["-50", "50", "big", "50", ""], dtype=object),
               "lum": [3.0, 3.0, 3.0, 3.0, 3.0],
               "lum_err": [0.3, np.inf, 0.3, 0.3, np.nan]})
    out = classify_table(t, n_draws=64, check_sptypes=False)
    flags = np.asarray(out["flags"], dtype=np.int64)
    bad = np.array([True, True, True, False, False])
    assert np.all((flags[bad] & F.BAD_INPUT) != 0) and np.all((flags[~bad] & F.BAD_INPUT) == 0)
    prob = np.ma.filled(np.ma.asarray(out["stage_prob"], dtype=float), np.nan)
    assert np.all(np.isnan(prob[bad])) and np.all(np.isfinite(prob[~bad]))
    for name in ("logt_err", "logl_err"):
        v = np.ma.filled(np.ma.asarray(out[name], dtype=float), np.nan)
        assert np.all(np.isnan(v[bad])), name
    text = [str(s) for s in out["flag_text"]]
    assert "teff_err is not a usable uncertainty" in text[0]
    assert "lum_err is not a usable uncertainty" in text[1]
    assert "teff_err is not a usable uncertainty" in text[2]
    assert "usable uncertainty" not in text[3] + text[4]
    # the label of the position itself stays (it does not depend on the errors)
    assert len(set(str(s) for s in out["stage"])) == 1 and str(out["stage"][0]) != "unclassified"
