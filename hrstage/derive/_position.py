"""The result of every derive path: an HR-diagram position with correlated errors."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np


@dataclass
class HRPosition:
    """Teff and luminosity of each input row, with errors, flags and provenance.

    Every array has one entry per input row, in input order (scalar input gives length-1
    arrays). Rows that could not be placed hold NaN and a flag bit saying why.

    Attributes
    ----------
    teff : numpy.ndarray
        Effective temperature (K).
    logt : numpy.ndarray
        log10(Teff / K).
    logl : numpy.ndarray
        log10(L / Lsun) with Lsun = 3.828e26 W (IAU 2015 B3).
    logt_err, logl_err : numpy.ndarray
        1-sigma errors (dex), including the calibration scatter of the relations used.
    corr : numpy.ndarray
        Correlation coefficient of the log Teff and log L errors (in [-1, 1]; 0 when independent).
    flags : numpy.ndarray of int64
        OR of :mod:`hrstage.flags` bits.
    source : numpy.ndarray of object
        Short text per row: how Teff and L were obtained.
    extra : dict of str -> numpy.ndarray
        Intermediate quantities (``distance_pc``, ``abs_mag``, ``bc``, ``extinction``,
        ``mass_used`` ...), one entry per row; except ``white_dwarf`` and ``other_reading`` of the
        photometric paths, dicts of arrays on the rows they concern (their ``rows``).
    source_codes : tuple or None
        ``(texts, codes)`` with ``source == texts[codes]``: the distinct provenance texts and an
        index per row (lets a writer store ``source`` dictionary-encoded without hashing strings).
    """

    teff: np.ndarray
    logt: np.ndarray
    logl: np.ndarray
    logt_err: np.ndarray
    logl_err: np.ndarray
    corr: np.ndarray
    flags: np.ndarray
    source: np.ndarray
    extra: dict = field(default_factory=dict)
    source_codes: tuple | None = field(default=None, repr=False)

    def __len__(self) -> int:
        return int(self.teff.shape[0])

    @property
    def cov(self) -> np.ndarray:
        """Covariance matrices of (log Teff, log L), shape (n, 2, 2)."""
        c = np.empty((len(self), 2, 2))
        c[:, 0, 0] = self.logt_err ** 2
        c[:, 1, 1] = self.logl_err ** 2
        c[:, 0, 1] = c[:, 1, 0] = self.corr * self.logt_err * self.logl_err
        return c

    def as_columns(self, *, extra: bool = False) -> dict:
        """The output columns of :mod:`hrstage.columns` filled by this layer.

        Parameters
        ----------
        extra : bool, default False
            Also include the arrays of :attr:`extra` under their own names.

        Returns
        -------
        dict of str -> numpy.ndarray
            ``teff_used``, ``logl_used``, ``logt_err``, ``logl_err``, ``logt_logl_corr``,
            ``hr_source``, ``flags`` (and the extras if asked).
        """
        cols = {
            "teff_used": self.teff,
            "logl_used": self.logl,
            "logt_err": self.logt_err,
            "logl_err": self.logl_err,
            "logt_logl_corr": self.corr,
            "hr_source": self.source,
            "flags": self.flags,
        }
        if extra:
            for k, v in self.extra.items():
                if not isinstance(v, dict):   # per-reading results (rows + values) are not columns
                    cols.setdefault(k, v)
        return cols
