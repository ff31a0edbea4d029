"""Generators of hostile catalogues for the reliability tests (invented stars, no real ones).

Each builder returns the catalogue and, per row, what a careful pipeline must do with it:

* ``"ok"``     — a plausible star: it must get a real stage (not ``unclassified``);
* ``"reject"`` — unusable input: ``unclassified`` with a reason in ``flag_text`` and the flag bit
  named in the row's ``expect_bits`` (``MISSING_INPUT`` for absent values, ``BAD_INPUT`` for
  non-physical ones, ``NONPOSITIVE_PARALLAX`` for parallaxes <= 0);
* ``"any"``    — the stage may be anything, but a reason must be given (e.g. metallicity junk,
  a position far outside every stage region).

The expectations come from the definitions of the flag bits in ``hrstage.flags`` and from the
contract "every input row comes out, in order, with a reason where it could not be classified"
(design.md, "What every star gets").
"""

from __future__ import annotations

import csv
from pathlib import Path

import numpy as np
from astropy.table import MaskedColumn, Table

from hrstage import flags as F

HUGE = 10**6  #: length of the oversized text fields (issue 8: "10^6-character fields")

# (label, teff K, lum Lsun, feh dex, expectation, bits that must be set if "reject")
_TEFF_LUM_ROWS = [
    ("sunlike", 5772.0, 1.0, 0.0, "ok", 0),                      # IAU 2015 B3 nominal Sun
    ("k_giant", 4500.0, 60.0, -0.2, "ok", 0),                    # a typical red-clump-ish giant (common practice)
    ("m_dwarf", 3300.0, 0.01, 0.1, "ok", 0),
    ("a_dwarf", 9500.0, 40.0, 0.0, "ok", 0),
    ("white_dwarf", 12000.0, 0.003, 0.0, "ok", 0),
    ("nan_teff", np.nan, 1.0, 0.0, "reject", F.MISSING_INPUT),
    ("nan_lum", 5000.0, np.nan, 0.0, "reject", F.MISSING_INPUT),
    ("both_nan", np.nan, np.nan, np.nan, "reject", F.MISSING_INPUT),
    ("inf_teff", np.inf, 1.0, 0.0, "reject", F.BAD_INPUT),
    ("neg_inf_lum", 5000.0, -np.inf, 0.0, "reject", F.BAD_INPUT),
    ("inf_lum", 5000.0, np.inf, 0.0, "reject", F.BAD_INPUT),
    ("negative_lum", 5000.0, -3.5, 0.0, "reject", F.BAD_INPUT),
    ("zero_lum", 5000.0, 0.0, 0.0, "reject", F.BAD_INPUT),
    ("zero_teff", 0.0, 1.0, 0.0, "reject", F.BAD_INPUT),
    ("negative_teff", -5000.0, 1.0, 0.0, "reject", F.BAD_INPUT),
    ("absurd_lum", 5000.0, 1e300, 0.0, "any", 0),
    ("tiny_lum", 5000.0, 1e-300, 0.0, "any", 0),
    ("nan_feh", 5772.0, 1.0, np.nan, "any", 0),
    ("inf_feh", 5772.0, 1.0, np.inf, "any", 0),
    ("huge_feh", 5772.0, 1.0, 1e300, "any", 0),
    ("neg_huge_feh", 5772.0, 1.0, -1e300, "any", 0),
]


#: A Teff no star has (1e30 K, log Teff = 30): must be one bad row, not the end of the catalogue.
ABSURD_TEFF_ROW = ("absurd_teff", 1e30, 1.0, 0.0, "reject", F.BAD_INPUT | F.MISSING_INPUT)


def teff_lum_table(repeat: int = 3, masked_rows: bool = True, extra_rows=()) -> tuple[Table, list[str], list[int]]:
    """A ``teff``/``lum``/``feh`` table mixing good stars with every kind of bad value.

    The block of rows is repeated ``repeat`` times (shuffled with a fixed seed) so that bad rows
    sit between good ones; with ``masked_rows`` a few extra rows carry masked (null) entries.

    Returns
    -------
    table : astropy.table.Table
        Columns ``star_id`` (text, unique), ``teff`` (K), ``lum`` (Lsun), ``feh``.
    expect : list of str
        ``"ok"``, ``"reject"`` or ``"any"`` per row.
    bits : list of int
        Flag bits that must be set on ``"reject"`` rows (0 otherwise).
    """
    rows = [r for _ in range(repeat) for r in (*_TEFF_LUM_ROWS, *extra_rows)]
    order = np.random.default_rng(8).permutation(len(rows))
    rows = [rows[i] for i in order]
    ids = [f"syn-{i:04d}-{r[0]}" for i, r in enumerate(rows)]
    teff = np.array([r[1] for r in rows])
    lum = np.array([r[2] for r in rows])
    feh = np.array([r[3] for r in rows])
    expect = [r[4] for r in rows]
    bits = [r[5] for r in rows]
    mask_t = np.zeros(len(rows), bool)
    mask_l = np.zeros(len(rows), bool)
    if masked_rows:
        # two extra rows: a masked Teff, a masked luminosity
        ids += [f"syn-{len(ids):04d}-masked_teff", f"syn-{len(ids) + 1:04d}-masked_lum"]
        teff = np.append(teff, [5000.0, 5000.0])
        lum = np.append(lum, [1.0, 1.0])
        feh = np.append(feh, [0.0, 0.0])
        mask_t = np.append(mask_t, [True, False])
        mask_l = np.append(mask_l, [False, True])
        expect += ["reject", "reject"]
        bits += [F.MISSING_INPUT, F.MISSING_INPUT]
    table = Table()
    table["star_id"] = ids
    table["teff"] = MaskedColumn(teff, mask=mask_t, unit="K")
    table["lum"] = MaskedColumn(lum, mask=mask_l, unit="solLum")
    table["feh"] = feh
    return table, expect, bits


# (label, G mag, BP-RP mag, parallax mas, parallax error mas, expectation, bits)
_GAIA_ROWS = [
    ("near_dwarf", 7.7, 0.82, 25.0, 0.02, "ok", 0),               # a Sun-like dwarf at 40 pc: M_G 4.69 (invented)
    ("far_giant", 11.5, 1.25, 0.5, 0.015, "ok", 0),               # a K giant at 2 kpc (invented)
    ("zero_plx", 12.0, 1.0, 0.0, 0.05, "reject", F.NONPOSITIVE_PARALLAX),
    ("negative_plx", 12.0, 1.0, -0.8, 0.05, "reject", F.NONPOSITIVE_PARALLAX),
    ("very_negative_plx", 15.0, 1.0, -40.0, 0.5, "reject", F.NONPOSITIVE_PARALLAX),
    ("nan_plx", 12.0, 1.0, np.nan, 0.05, "reject", F.MISSING_INPUT),
    ("inf_plx", 12.0, 1.0, np.inf, 0.05, "reject", F.BAD_INPUT | F.MISSING_INPUT),
    ("noisy_plx", 17.0, 1.0, 0.3, 0.6, "any", F.LOW_PARALLAX_SNR),
    ("nan_mag", np.nan, 1.0, 2.0, 0.05, "reject", F.MISSING_INPUT),
    ("nan_colour", 12.0, np.nan, 2.0, 0.05, "reject", F.MISSING_INPUT),
]


def gaia_table(repeat: int = 2) -> tuple[Table, list[str], list[int]]:
    """Gaia-like photometry + parallax with zero, negative, NaN and infinite parallaxes."""
    rows = [r for _ in range(repeat) for r in _GAIA_ROWS]
    table = Table()
    table["star_id"] = [f"gsyn-{i:04d}-{r[0]}" for i, r in enumerate(rows)]
    table["phot_g_mean_mag"] = np.array([r[1] for r in rows])
    table["bp_rp"] = np.array([r[2] for r in rows])
    table["parallax"] = np.array([r[3] for r in rows])
    table["parallax_error"] = np.array([r[4] for r in rows])
    for name in ("phot_g_mean_mag", "bp_rp"):
        table[name].unit = "mag"
    table["parallax"].unit = "mas"
    table["parallax_error"].unit = "mas"
    return table, [r[5] for r in rows], [r[6] for r in rows]


# --- files --------------------------------------------------------------------------------
def _write_csv(path: Path, header: list[str], rows: list[list]) -> Path:
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(header)
        w.writerows(rows)
    return path


def csv_duplicate_header(path: Path) -> Path:
    """A CSV whose header names ``teff`` twice (a second, conflicting Teff column)."""
    rows = [[f"dup-{i}", 5000.0 + 100 * i, 1.0 + i, 9999.0] for i in range(6)]
    return _write_csv(path, ["star_id", "teff", "lum", "teff"], rows)


def csv_text_in_numbers(path: Path) -> tuple[Path, list[str]]:
    """A CSV where some luminosity and Teff cells hold words instead of numbers.

    Returns the path and the expectation per row (``"ok"`` for the clean rows, ``"reject"`` for
    the rows with text where a number belongs).
    """
    rows, expect = [], []
    junk = {2: ("teff", "hot"), 5: ("lum", "bright"), 7: ("lum", "1.2.3"), 9: ("teff", "5e3K")}
    for i in range(12):
        # dwarfs near the main sequence, L ~ (Teff / 5772 K)^6 (a rough K-F dwarf trend, common practice)
        teff = 4000.0 + 250 * i
        lum = round((teff / 5772.0) ** 6, 4)
        if i in junk:
            col, word = junk[i]
            teff, lum = (word, lum) if col == "teff" else (teff, word)
            expect.append("reject")
        else:
            expect.append("ok")
        rows.append([f"txt-{i:02d}", teff, lum])
    return _write_csv(path, ["star_id", "teff", "lum"], rows), expect


def csv_huge_fields(path: Path) -> tuple[Path, list[str]]:
    """A CSV with 10^6-character fields: in a free-text column, in the MK type, in the id.

    The stars themselves are fine, so every row must still be classified; the giant MK type
    cannot be parsed and must say so.
    """
    big = "x" * HUGE
    rows = [
        ["huge-0", 5772.0, 1.0, "G2V", "ordinary row"],
        ["huge-1", 4600.0, 50.0, "K1III", big],
        ["huge-2", 5200.0, 0.6, "K0" + "V" * HUGE, "mk type of a million characters"],
        ["huge-3" + "9" * HUGE, 9000.0, 30.0, "A2V", "id of a million characters"],
        ["huge-4", 3500.0, 0.03, "M2V", "é" * HUGE],
    ]
    return _write_csv(path, ["star_id", "teff", "lum", "sptype", "note"], rows), ["ok"] * 5
