"""Spectral type -> expected Teff, log L and M_V per luminosity class, with the scatter of real stars.

Tables
------
``hrstage/data/sptype_calibration.ecsv``, compiled and typed by us (anchor subtypes, one source
key per row, full citations in the file header):

* class V — Pecaut & Mamajek 2013, ApJS 208, 9, Table 5, as extended by E. Mamajek (version
  2024.05.15): O3–Y0 Teff and log L, M_V to L4;
* classes IV, III, II, Ib, Iab, Ia — Straižys & Kuriliene 1981, Ap&SS 80, 353, Tables III–IV
  (secondary transcription; M_V derived, see the file header).

Between anchors everything is linear in log Teff, log L and M_V against the continuous type index
of :mod:`hrstage.sptype.parser`; outside a class's anchors the value is NaN (never extrapolated).

Scatter
-------
The 1-sigma distance of a real star from its class's calibration (``sigma_logl``, ``sigma_logt``)
comes from the empirical check on Hipparcos stars in the project's MK-type research note §3.4
(robust sigma of M_V offsets: V 0.46–0.71 mag by class letter, IV 0.86, III 0.81 mag; Teff of
dwarfs 1.9–5.7 %), from Allen's quoted sigmas for giants and from the literature figures collected
there for supergiants (±0.5–1 mag within a sub-class) and early types (5–10 % Teff systematics
between calibrations). The class-II figure is deliberately wide: the SK81 class-II luminosities are
too bright for what catalogues call "II" among nearby G–K stars (note §3.4), so class II is a weak
constraint. These are our choices from those figures, documented in ``docs/sptype.md``.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from importlib import resources

import numpy as np

from .lumclass import CHECK_CLASSES

__all__ = [
    "Calibration",
    "calibration",
    "sigma_logl",
    "sigma_logt",
    "wd_teff_from_index",
    "CLASS_NUMBER",
    "BINARY_ALLOWANCE_DEX",
]

#: numeric luminosity-class value of each calibrated class (see ``lumclass``)
CLASS_NUMBER = {"Ia": 1.0, "Iab": 1.5, "Ib": 2.0, "II": 3.0, "III": 4.0, "IV": 5.0, "V": 6.0}

#: Unresolved equal-mass binaries sit up to 0.75 mag (0.3 dex) above the main sequence
#: (design note, "Unresolved binaries"; common practice). Dwarfs brighter than the class-V
#: calibration by less than this are not counted against their class.
BINARY_ALLOWANCE_DEX = 0.30

# (upper edge of the continuous type index, sigma) — temperature groups O/B, A, F, G, K, M+
_EDGES = np.array([20.0, 30.0, 40.0, 50.0, 60.0])

#: 1-sigma scatter of log L about the class calibration (dex) per group O/B, A, F, G, K, M+.
#: V: note §3.4 robust sigma of M_V (A 0.71, F 0.60, G 0.57, K 0.46 mag; O-B "0.5-0.8 mag", taken
#: 0.7; M: Mamajek's M_V fit rms 0.46 mag), divided by 2.5. IV: 0.86 mag. III: 0.81 mag.
#: II: 1.0 mag (weak constraint, see module docstring). Ib/Iab/Ia: 0.75 mag (literature ±0.5-1 mag).
_SIG_LOGL = {
    "V": (0.28, 0.28, 0.24, 0.23, 0.18, 0.18),
    "IV": (0.34,) * 6,
    "III": (0.32,) * 6,
    "II": (0.40,) * 6,
    "Ib": (0.30,) * 6,
    "Iab": (0.30,) * 6,
    "Ia": (0.30,) * 6,
}

#: 1-sigma scatter of log Teff about the class calibration (dex) per group O/B, A, F, G, K, M+.
#: V: note §3.4 dwarf check (A 5.7 %, F 1.9 %, G 2.3 %, K 3.0 %, M 3.1 %); O/B, every class: 5-10 %
#: systematics between calibrations (note §3.3), taken at the upper end, 10 % (0.045 dex), because
#: colours hardly change with Teff there and reddening is not known for most catalogue stars.
#: IV/III/II: ±3 % (note §3.4 summary); M giants ±150 K (Allen's 70 K plus the metallicity
#: dependence ±100-150 K quoted in the note [from memory there]) = 0.020 dex. I: A-K ±150-300 K
#: between scales (~4 %), K-M ±100-150 K (~3.5 %).
_SIG_LOGT = {
    "V": (0.045, 0.025, 0.008, 0.010, 0.013, 0.013),
    "IV": (0.045, 0.013, 0.013, 0.013, 0.013, 0.020),
    "III": (0.045, 0.013, 0.013, 0.013, 0.013, 0.020),
    "II": (0.045, 0.017, 0.013, 0.013, 0.013, 0.020),
    "Ib": (0.045, 0.017, 0.017, 0.017, 0.015, 0.015),
    "Iab": (0.045, 0.017, 0.017, 0.017, 0.015, 0.015),
    "Ia": (0.045, 0.017, 0.017, 0.017, 0.015, 0.015),
}


def _group(numeric) -> np.ndarray:
    return np.searchsorted(_EDGES, np.nan_to_num(np.asarray(numeric, dtype=float), nan=45.0), side="right")


def sigma_logl(lumclass: str, numeric) -> np.ndarray:
    """1-sigma scatter (dex) of log L of real stars about the calibration of ``lumclass``."""
    return np.asarray(_SIG_LOGL[lumclass], dtype=float)[_group(numeric)]


def sigma_logt(lumclass: str, numeric) -> np.ndarray:
    """1-sigma scatter (dex) of log Teff of real stars about the calibration of ``lumclass``."""
    return np.asarray(_SIG_LOGT[lumclass], dtype=float)[_group(numeric)]


def wd_teff_from_index(index) -> np.ndarray:
    """White-dwarf Teff (K) from the temperature index of the type: 50400 / index (Sion et al. 1983)."""
    index = np.asarray(index, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(index > 0, 50400.0 / index, np.nan)


@dataclass(frozen=True)
class _Sequence:
    numeric: np.ndarray
    logt: np.ndarray
    logl: np.ndarray
    mv: np.ndarray
    # the same sequence ordered by log Teff, for the HR-diagram locus
    locus_logt: np.ndarray
    locus_logl: np.ndarray


class Calibration:
    """The shipped type -> (Teff, log L, M_V) table, one sequence per luminosity class.

    Use :func:`calibration` to get the cached instance.
    """

    def __init__(self, table):
        self.table = table
        self.meta = dict(table.meta)
        self._seq: dict[str, _Sequence] = {}
        for cls in CHECK_CLASSES:
            rows = table[table["lumclass"] == cls]
            order = np.argsort(rows["numeric"])
            num = np.asarray(rows["numeric"], dtype=float)[order]
            logt = np.log10(np.asarray(rows["teff"], dtype=float)[order])
            logl = np.asarray(rows["logl"], dtype=float)[order]
            mv = np.asarray(rows["mv"], dtype=float)[order]
            by_t = np.argsort(logt)
            self._seq[cls] = _Sequence(num, logt, logl, mv, logt[by_t], logl[by_t])

    @property
    def classes(self) -> tuple[str, ...]:
        return tuple(self._seq)

    def type_range(self, lumclass: str) -> tuple[float, float]:
        """Continuous type index covered by the class's anchors."""
        s = self._seq[lumclass]
        return float(s.numeric[0]), float(s.numeric[-1])

    @staticmethod
    def _interp(x, xp, fp):
        x = np.asarray(x, dtype=float)
        out = np.interp(x, xp, fp)
        out = np.where((x < xp[0]) | (x > xp[-1]) | np.isnan(x), np.nan, out)
        # a NaN anchor value (M_V not given) poisons its interval
        if np.isnan(fp).any():
            good = ~np.isnan(fp)
            inside = np.interp(x, xp, good.astype(float))
            out = np.where(inside < 1.0, np.nan, out)
        return out

    def logt(self, numeric, lumclass: str) -> np.ndarray:
        """log10 Teff expected for type index ``numeric`` in ``lumclass`` (NaN outside the table)."""
        s = self._seq[lumclass]
        return self._interp(numeric, s.numeric, s.logt)

    def teff(self, numeric, lumclass: str) -> np.ndarray:
        """Teff (K) expected for type index ``numeric`` in ``lumclass``."""
        return 10.0 ** self.logt(numeric, lumclass)

    def logl(self, numeric, lumclass: str) -> np.ndarray:
        """log10 L/Lsun expected for type index ``numeric`` in ``lumclass``."""
        s = self._seq[lumclass]
        return self._interp(numeric, s.numeric, s.logl)

    def mv(self, numeric, lumclass: str) -> np.ndarray:
        """Absolute visual magnitude expected for type index ``numeric`` in ``lumclass``."""
        s = self._seq[lumclass]
        return self._interp(numeric, s.numeric, s.mv)

    def locus_logl(self, logt, lumclass: str) -> np.ndarray:
        """log L of the class sequence at measured log Teff ``logt`` (NaN outside its Teff span)."""
        s = self._seq[lumclass]
        return self._interp(logt, s.locus_logt, s.locus_logl)

    def locus_slope(self, logt, lumclass: str) -> np.ndarray:
        """d log L / d log Teff of the class sequence at ``logt`` (for error propagation)."""
        s = self._seq[lumclass]
        d = np.diff(s.locus_logl) / np.diff(s.locus_logt)
        idx = np.clip(np.searchsorted(s.locus_logt, np.nan_to_num(np.asarray(logt, dtype=float)), side="right") - 1,
                      0, len(d) - 1)
        return d[idx]


@lru_cache(maxsize=1)
def calibration() -> Calibration:
    """The shipped calibration (read once from ``hrstage/data/sptype_calibration.ecsv``)."""
    from astropy.table import Table

    path = resources.files("hrstage").joinpath("data/sptype_calibration.ecsv")
    with resources.as_file(path) as p:
        table = Table.read(p, format="ascii.ecsv")
    return Calibration(table)
