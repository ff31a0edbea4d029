"""Readers of the published isochrone files in HRSTAGE_VALIDATION_DIR, shared by the classifier tests.

- PARSEC v1.2S, Z = 0.014 (Bressan et al. 2012, MNRAS 427, 127): columns age, Mini, Mact, log L,
  log Teff, log g, composition, phase (0 = pre-main sequence and main sequence together).
- MIST v1.2 (Choi et al. 2016, ApJ 823, 102; Dotter 2016, ApJS 222, 8): the ``.iso.cmd`` format,
  whose last commented header line names the columns.
"""

from __future__ import annotations

import numpy as np


def parsec_columns(path):
    """PARSEC columns as arrays: age, mini, logl, logt, logg, ph."""
    age, mini, _mact, logl, logt, logg, _comp, ph = np.loadtxt(path).T
    return age, mini, logl, logt, logg, ph


def parsec_split(mini, logt, logg, age, ph):
    """Split PARSEC's phase 0 into (pre_main_sequence, post_main_sequence) boolean masks.

    Pre-main sequence: per 0.01-dex mass bin, points younger than the age at which log g peaks (the
    contraction onto the ZAMS ends there), by more than 0.02 dex in log g. Post-main sequence still
    labelled 0 (massive stars crossing the gap): along each isochrone in mass order, everything after
    log Teff first falls 0.05 dex below its running maximum.
    """
    ph0 = ph == 0
    young = np.zeros(len(ph), bool)
    b = np.round(np.log10(mini) / 0.01).astype(int)
    for k in np.unique(b[ph0]):
        s = np.nonzero(ph0 & (b == k))[0]
        i = s[np.argmax(logg[s])]
        young[s] = (age[s] < age[i]) & (logg[s] < logg[i] - 0.02)
    post = np.zeros(len(ph), bool)
    for a in np.unique(age):
        s = np.nonzero((age == a) & ph0 & ~young)[0]
        s = s[np.argsort(mini[s])]
        k = np.nonzero(np.maximum.accumulate(logt[s]) - logt[s] > 0.05)[0]
        if len(k):
            post[s[k[0]:]] = True
    return young, post


def mist_columns(path):
    """A MIST ``.iso.cmd`` file as a dict column name -> array."""
    with open(path) as fh:
        header = [line for line in fh if line.startswith("#") and "EEP" in line and "log_Teff" in line]
    cols = header[-1][1:].split()
    d = np.loadtxt(path, comments="#")
    return {n: d[:, i] for i, n in enumerate(cols)}
