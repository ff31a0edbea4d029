"""A scikit-learn estimator around :func:`classify_hr` (boundaries fixed by physics, not learnt)."""

from __future__ import annotations

import numpy as np
from sklearn.base import BaseEstimator, ClassifierMixin
from sklearn.utils.validation import check_is_fitted, validate_data

from ..defaults import DEFAULT_DRAWS, DEFAULT_SEED
from ..stages import STAGES
from ._core import classify_hr


class StageClassifier(ClassifierMixin, BaseEstimator):
    """Evolutionary-stage classifier with the scikit-learn interface.

    The stage boundaries come from published stellar relations, so ``fit`` learns nothing: it
    checks ``X`` and records ``classes_`` (all of ``hrstage.stages.STAGES``) and
    ``n_features_in_``; ``y`` is accepted and ignored.

    ``X`` columns: 2 ``[log Teff, log L]``; 3 ``[.., feh]``; 4 ``[.., logt_err, logl_err]``;
    5 ``[.., logt_err, logl_err, corr]``; 6 ``[.., logt_err, logl_err, corr, feh]``. NaN rows and
    rows whose first column is not a plausible log Teff come out ``unclassified``.

    Parameters
    ----------
    feh : float or None, default 0.0
        [Fe/H] when X has no metallicity column (None: solar, flagged as assumed).
    n_draws : int, default :data:`hrstage.defaults.DEFAULT_DRAWS` (128)
        Monte Carlo draws for ``predict_proba`` (0: one-hot probabilities of the label).
    seed : int, default 20240601
        Seed of the common random numbers.
    stage_params : dict or None, default None
        Keyword arguments for the stage map (:class:`hrstage.stagemap.StageParams`) and the
        classifier options.
    """

    def __init__(self, feh=0.0, n_draws=DEFAULT_DRAWS, seed=DEFAULT_SEED, stage_params=None):
        self.feh = feh
        self.n_draws = n_draws
        self.seed = seed
        self.stage_params = stage_params

    def __sklearn_tags__(self):
        tags = super().__sklearn_tags__()
        tags.input_tags.allow_nan = True
        tags.requires_fit = True
        return tags

    def fit(self, X, y=None):
        """Check X, set ``classes_`` and ``n_features_in_``; the boundaries are fixed."""
        if y is None:
            X = validate_data(self, X, reset=True, ensure_all_finite="allow-nan", dtype=np.float64)
        else:
            X, _ = validate_data(self, X, y, reset=True, ensure_all_finite="allow-nan", dtype=np.float64)
        if not 2 <= X.shape[1] <= 6:
            raise ValueError(f"X has {X.shape[1]} columns; expected 2 to 6 (see the class docstring)")
        self.classes_ = np.array(STAGES)
        return self

    def _result(self, X):
        check_is_fitted(self, "classes_")
        X = validate_data(self, X, reset=False, ensure_all_finite="allow-nan", dtype=np.float64)
        kw = dict(self.stage_params or {})
        cols = X.shape[1]
        logt_err = X[:, 2] if cols >= 4 else None
        logl_err = X[:, 3] if cols >= 4 else None
        corr = X[:, 4] if cols >= 5 else None
        feh = X[:, 5] if cols == 6 else (X[:, 2] if cols == 3 else self.feh)
        # positions that are not log Teff are left unclassified rather than raising
        logt = np.where((X[:, 0] >= 2.0) & (X[:, 0] <= 6.5), X[:, 0], np.nan)
        st = None if logt_err is None else np.abs(logt_err)
        sl = None if logl_err is None else np.abs(logl_err)
        cr = None if corr is None else np.clip(corr, -1, 1)
        return classify_hr(logt, X[:, 1], logt_err=st, logl_err=sl, corr=cr, feh=feh,
                           n_draws=self.n_draws, seed=self.seed, **kw)

    def predict(self, X):
        """Stage name of each row."""
        return self._result(X).stage

    def predict_proba(self, X):
        """Probability of each stage (columns ordered as ``classes_``); rows sum to 1."""
        return self._result(X).proba
